package dev.heed.cli;

import dev.heed.attention.KernelOptions;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.NodeIndex;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerRun;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * The classify code path shared by {@code heed classify} and {@code heed classify --demo}: reads
 * the graph and features once, runs the model and prints a summary (the predictions are written by
 * a {@link PredictionWriter}).
 */
final class ClassifyRun {

  private final AttentionModel model;
  private final String modelName;
  private final Path graphFile;
  private final Path featuresFile;
  private final GraphFileOptions graphOptions;
  private final CsrGraph graph;
  private final NodeIndex<String> nodes;
  private final long edgeLines;
  private final int edgeless;
  private final NodeFeatures features;
  private final double graphSeconds;
  private final double featureSeconds;

  private ClassifyRun(
      AttentionModel model,
      String modelName,
      Path graphFile,
      Path featuresFile,
      GraphFileOptions graphOptions,
      EdgeListResult<String> read,
      FeatureFiles.Read features,
      double graphSeconds,
      double featureSeconds) {
    this.model = model;
    this.modelName = modelName;
    this.graphFile = graphFile;
    this.featuresFile = featuresFile;
    this.graphOptions = graphOptions;
    List<String> extra = features.edgeless();
    this.graph =
        EdgelessNodes.extend(
            read.graph(),
            extra.size(),
            graphOptions.selfLoopPolicy() == dev.heed.graph.SelfLoopPolicy.ADD);
    this.nodes = EdgelessNodes.extend(read.nodes(), extra);
    this.edgeLines = read.edgeLines();
    this.edgeless = extra.size();
    this.features = features.features();
    this.graphSeconds = graphSeconds;
    this.featureSeconds = featureSeconds;
  }

  /** Reads graph and features for a model; threads null means the kernels' default. */
  static ClassifyRun load(
      AttentionModel model,
      String modelName,
      Path graphFile,
      Path featuresFile,
      GraphFileOptions graphOptions,
      Integer threads)
      throws IOException {
    requireFile(graphFile, "--graph");
    requireFile(featuresFile, "--features");
    if (threads != null) {
      if (threads < 1) {
        throw new CliException("--threads must be at least 1, got " + threads, HeedCli.EXIT_USAGE);
      }
      model = model.withKernelOptions(KernelOptions.defaults().withThreads(threads));
    }
    long start = System.nanoTime();
    EdgeListResult<String> graph = graphOptions.read(graphFile);
    if (graph.graph().nodeCount() == 0) {
      throw new CliException(graphFile + ": no edges in the file", HeedCli.EXIT_USER_ERROR);
    }
    long read = System.nanoTime();
    FeatureFiles.Read features =
        FeatureFiles.read(featuresFile, graphOptions.delimiterSetting(), graph.nodes(), model);
    long done = System.nanoTime();
    return new ClassifyRun(
        model,
        modelName,
        graphFile,
        featuresFile,
        graphOptions,
        graph,
        features,
        (read - start) / 1e9,
        (done - read) / 1e9);
  }

  static void requireFile(Path file, String option) {
    if (!java.nio.file.Files.isRegularFile(file)) {
      throw new CliException(
          option
              + ": "
              + (java.nio.file.Files.exists(file) ? "not a regular file: " : "file not found: ")
              + file,
          HeedCli.EXIT_USER_ERROR);
    }
  }

  NodeIndex<String> nodes() {
    return nodes;
  }

  CsrGraph graph() {
    return graph;
  }

  /** The number of edge lines read from the graph file. */
  long edgeLines() {
    return edgeLines;
  }

  AttentionModel model() {
    return model;
  }

  /** Node indices of ids, failing with the unknown ones listed. */
  int[] indicesOf(List<String> ids) {
    int[] indices = new int[ids.size()];
    List<String> unknown = new ArrayList<>();
    int unknownCount = 0;
    for (int i = 0; i < ids.size(); i++) {
      indices[i] = nodes.indexOf(ids.get(i));
      if (indices[i] < 0 && unknownCount++ < 5) {
        unknown.add("'" + ids.get(i) + "'");
      }
    }
    if (unknownCount > 0) {
      throw new CliException(
          "--nodes: "
              + unknownCount
              + (unknownCount == 1 ? " id is" : " ids are")
              + " not in the graph "
              + graphFile
              + ": "
              + String.join(", ", unknown)
              + (unknownCount > unknown.size() ? ", ..." : "")
              + " (ids are matched exactly, as written in the edge list)",
          HeedCli.EXIT_USER_ERROR);
    }
    return indices;
  }

  /** Classifies all nodes (null) or the given ones; explainK 0 means no explanations. */
  Classification classify(int[] nodeIndices, PathChoice path, int explainK) {
    ClassifyOptions options = ClassifyOptions.defaults().withPath(path);
    if (explainK > 0) {
      options = options.withExplanations(explainK);
    }
    NodeClassifier classifier = NodeClassifier.of(model, options);
    return nodeIndices == null
        ? classifier.classify(graph, features)
        : classifier.classify(graph, features, nodeIndices);
  }

  /** The top neighbours of the last attention layer, averaged over heads; empty if none. */
  static List<NeighbourWeight> lastLayerNeighbours(NodePrediction p) {
    List<LayerExplanation> layers = p.explanation().orElse(List.of());
    return layers.isEmpty() ? List.of() : layers.get(layers.size() - 1).topNeighbours();
  }

  /** Prints the summary: sizes, per-layer path and time, totals. */
  void printSummary(
      Classification result, double classifySeconds, double totalSeconds, PrintWriter err) {
    err.printf(
        Locale.ROOT,
        "heed classify: %,d nodes, %,d edges (attention entries; %,d lines of %s, %s)%n",
        graph.nodeCount(),
        graph.entryCount(),
        edgeLines,
        graphFile.getFileName(),
        graphOptions.describePolicies());
    if (edgeless > 0) {
      err.printf(
          Locale.ROOT,
          "  %,d of the nodes appear only in %s (no edges): they attend to %s%n",
          edgeless,
          featuresFile.getFileName(),
          graphOptions.selfLoopPolicy() == dev.heed.graph.SelfLoopPolicy.ADD
              ? "themselves only"
              : "nothing");
    }
    err.printf(
        Locale.ROOT,
        "  features: %d per node from %s; model %s, %d threads%n",
        features.featureCount(),
        featuresFile.getFileName(),
        modelName,
        model.kernelOptions().threads());
    err.printf(
        Locale.ROOT, "  %-5s %-20s %-16s %-7s %9s%n", "layer", "name", "kind", "path", "seconds");
    double layerTotal = 0;
    for (LayerRun run : result.layerRuns()) {
      layerTotal += run.nanos() / 1e9;
      err.printf(
          Locale.ROOT,
          "  %-5d %-20s %-16s %-7s %9.3f%n",
          run.layerIndex(),
          run.layerName(),
          run.kind(),
          run.path().map(p -> p.name().toLowerCase(Locale.ROOT)).orElse("-"),
          run.nanos() / 1e9);
    }
    err.printf(
        Locale.ROOT,
        "  total %.3f s: read graph %.3f, read features %.3f, layers %.3f, classify call %.3f%n",
        totalSeconds,
        graphSeconds,
        featureSeconds,
        layerTotal,
        classifySeconds);
    err.flush();
  }
}
