package dev.heed.bench.live;

import dev.heed.bench.model.TargetedScoringBenchmark;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.util.SplittableRandom;

/**
 * The scored live graph of the refresh benchmarks: an R-MAT graph ({@link RmatGenerator}, Graph500
 * initiator, scrambled ids) of {@code 2^scale} nodes with integer ids 0..n-1 and {@code edgeFactor
 * · 2^scale} generated edges, symmetrised, self-loops added, repeats merged, each node with seeded
 * Gaussian features; loaded in batches of 65,536 and compacted.
 */
final class RmatLiveGraph {

  /** Features per node (the input width of {@link TargetedScoringBenchmark#model}). */
  static final int FEATURES = 64;

  private static final int LOAD_BATCH = 1 << 16;

  private RmatLiveGraph() {}

  /**
   * Builds and loads the graph.
   *
   * @param scale log2 of the node count
   * @param edgeFactor generated edges per node
   * @param seed the R-MAT seed
   * @param features draws the node features (and is left where they end)
   * @param background whether the graph compacts in the background
   * @return the loaded, compacted graph
   */
  static VersionedGraph<Integer> load(
      int scale, int edgeFactor, long seed, SplittableRandom features, boolean background) {
    int n = 1 << scale;
    int e = edgeFactor << scale;
    int[] s = new int[e];
    int[] t = new int[e];
    RmatGenerator.withScale(scale).edgeCount(e).seed(seed).generateInto(s, t);
    VersionedGraph<Integer> graph =
        VersionedGraph.builder(FEATURES)
            .direction(DirectionPolicy.SYMMETRISE)
            .selfLoops(SelfLoopPolicy.ADD)
            .duplicates(DuplicatePolicy.MERGE)
            .backgroundCompaction(background)
            .build();
    UpdateBatch<Integer> batch = graph.newBatch();
    for (int v = 0; v < n; v++) {
      batch.addNode(v, gaussianRow(features));
      if (batch.size() == LOAD_BATCH || v == n - 1) {
        graph.apply(batch);
        batch.clear();
      }
    }
    for (int k = 0; k < e; k++) {
      batch.addEdge(s[k], t[k]);
      if (batch.size() == LOAD_BATCH || k == e - 1) {
        graph.apply(batch);
        batch.clear();
      }
    }
    graph.compact();
    return graph;
  }

  /** A fresh row of {@link #FEATURES} seeded Gaussian features. */
  static float[] gaussianRow(SplittableRandom random) {
    float[] row = new float[FEATURES];
    for (int k = 0; k < FEATURES; k++) {
      row[k] = (float) TargetedScoringBenchmark.gaussian(random);
    }
    return row;
  }
}
