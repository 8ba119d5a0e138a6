package dev.heed.cli;

import java.nio.file.Path;
import picocli.CommandLine.Option;

/**
 * The features file of {@code heed classify} and {@code heed train}, and the ids of a {@code .npy}
 * one: the same options in both, read by {@link FeatureFiles}.
 */
final class FeatureFileOptions {

  @Option(
      names = "--features",
      paramLabel = "FILE",
      description =
          "Node features, matched to nodes by id: CSV 'id,f1,...,fn' (optional header naming the"
              + " features), .npz with 'features' [n, f] and 'node_ids' [n], or .npy [n, f] with"
              + " its ids (--feature-ids); a .npy without ids is row i = node id i, for graphs"
              + " whose ids are 0..n-1.")
  Path features;

  @Option(
      names = "--feature-ids",
      paramLabel = "FILE",
      description =
          "The node ids of a .npy features file, one per line in row order (default: X.ids"
              + " beside X.npy, if present).")
  Path featureIds;
}
