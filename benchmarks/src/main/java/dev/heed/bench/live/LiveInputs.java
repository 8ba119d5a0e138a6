package dev.heed.bench.live;

import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.util.SplittableRandom;

/**
 * The benchmark inputs: R-MAT edges, node ids and features, and a live graph preloaded with nodes.
 */
final class LiveInputs {

  /** R-MAT scale: 2^20 nodes. */
  static final int SCALE = 20;

  /** Edges: the Graph500 edge factor 16, so 16 · 2^20 = 16,777,216. */
  static final int EDGES = RmatGenerator.DEFAULT_EDGE_FACTOR << SCALE;

  /** Seed of the R-MAT edges. */
  static final long SEED = 20260401L;

  /** Features per node. */
  static final int FEATURES = 8;

  /** Edges per update batch. */
  static final int BATCH = 1024;

  private LiveInputs() {}

  /** Returns {sources, targets} of the benchmark R-MAT graph, ids scrambled. */
  static int[][] rmatEdges() {
    int[] sources = new int[EDGES];
    int[] targets = new int[EDGES];
    RmatGenerator.withScale(SCALE).seed(SEED).generateInto(sources, targets);
    return new int[][] {sources, targets};
  }

  /** Returns the caller ids of the 2^SCALE nodes: node i has id 10^12 + i, boxed once. */
  static Long[] nodeIds() {
    Long[] ids = new Long[1 << SCALE];
    for (int i = 0; i < ids.length; i++) {
      ids[i] = 1_000_000_000_000L + i;
    }
    return ids;
  }

  /**
   * Adds every node, with seeded random features, in batches of 65,536, then compacts: the graph
   * then holds the nodes, their features and their self-loops in its base, and no edges.
   */
  static void addNodes(VersionedGraph<Long> graph, Long[] ids) {
    SplittableRandom random = new SplittableRandom(SEED);
    UpdateBatch<Long> batch = graph.newBatch();
    float[] row = new float[FEATURES];
    for (int i = 0; i < ids.length; i++) {
      for (int k = 0; k < FEATURES; k++) {
        row[k] = (float) random.nextDouble(-1, 1);
      }
      batch.addNode(ids[i], row);
      if (batch.size() == 1 << 16 || i == ids.length - 1) {
        graph.apply(batch);
        batch.clear();
      }
    }
    graph.compact();
  }
}
