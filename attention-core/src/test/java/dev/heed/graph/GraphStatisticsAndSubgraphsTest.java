package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.generate.RmatGenerator;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

class GraphStatisticsAndSubgraphsTest {

  @Test
  void statisticsOfASmallGraph() {
    // rows: 0 -> {0,1,2}, 1 -> {}, 2 -> {2}, 3 -> {0, 1}
    CsrGraph g = CsrGraph.of(new int[] {0, 3, 3, 4, 6}, new int[] {0, 1, 2, 2, 0, 1});
    GraphStatistics s = GraphStatistics.of(g);
    assertEquals(new GraphStatistics(4, 6, 6 / 16.0, 0, 1.5, 1.5, 3, 2), s);
    CsrGraph odd = CsrGraph.of(new int[] {0, 3, 3, 4}, new int[] {0, 1, 2, 2});
    assertEquals(1.0, GraphStatistics.of(odd).medianDegree());
    assertEquals(
        new GraphStatistics(0, 0, 0, 0, 0, 0, 0, 0),
        GraphStatistics.of(CsrGraph.of(new int[] {0}, new int[0])));
  }

  /** Median against a plain sort of the degrees, on random graphs. */
  @Test
  void medianMatchesSortedDegrees() {
    for (long seed = 1; seed <= 20; seed++) {
      SplittableRandom random = new SplittableRandom(seed);
      int n = 1 + random.nextInt(500);
      int e = random.nextInt(5 * n);
      int[] s = random.ints(e, 0, n).toArray();
      int[] t = random.ints(e, 0, Math.max(1, n / 3)).toArray();
      CsrGraph g = CsrGraphBuilder.fromEdges(s, t, n).build();
      int[] degrees = new int[n];
      for (int i = 0; i < n; i++) {
        degrees[i] = g.degree(i);
      }
      Arrays.sort(degrees);
      double median = (degrees[(n - 1) / 2] + degrees[n / 2]) / 2.0;
      GraphStatistics stats = GraphStatistics.of(g);
      assertEquals(median, stats.medianDegree(), "seed " + seed);
      assertEquals(degrees[0], stats.minDegree(), "seed " + seed);
      assertEquals(degrees[n - 1], stats.maxDegree(), "seed " + seed);
      assertEquals(g.edgeCount() / (double) n, stats.meanDegree(), 1e-12, "seed " + seed);
      assertEquals(n, stats.selfLoopCount(), "seed " + seed);
    }
  }

  @Test
  void inducedSubgraphKeepsOriginalIds() {
    // 0 -> 1, 1 -> 2, 2 -> 3, 3 -> 0, 0 -> 2 (self-loops added)
    CsrGraph g =
        CsrGraphBuilder.fromEdges(new int[] {0, 1, 2, 3, 0}, new int[] {1, 2, 3, 0, 2}, 4).build();
    Subgraph sub = Subgraphs.induced(g, new int[] {2, 0, 2, 1});
    assertArrayEquals(new int[] {0, 1, 2}, sub.originalIds());
    assertEquals(0, sub.localId(0));
    assertEquals(-1, sub.localId(3));
    assertEquals(2, sub.originalId(2));
    CsrGraph local = sub.graph();
    // local rows: 0 <- {0}, 1 <- {0, 1}, 2 <- {0, 1, 2}
    assertArrayEquals(new int[] {0, 1, 3, 6}, local.rowOffsets());
    assertArrayEquals(new int[] {0, 0, 1, 0, 1, 2}, local.columns());
    IllegalArgumentException ex =
        assertThrows(IllegalArgumentException.class, () -> Subgraphs.induced(g, new int[] {4}));
    assertTrue(ex.getMessage().contains("nodes[0] = 4"), ex.getMessage());
    assertThrows(IndexOutOfBoundsException.class, () -> sub.originalId(3));
  }

  /** Induced subgraph property: an entry is kept exactly when both ends are in the set. */
  @Test
  void inducedSubgraphMatchesDefinitionOnRmat() {
    CsrGraph g = RmatGenerator.withScale(10).edgeFactor(8).seed(5).generateEdges().build();
    SplittableRandom random = new SplittableRandom(5);
    int[] nodes = random.ints(300, 0, g.nodeCount()).toArray();
    Subgraph sub = Subgraphs.induced(g, nodes);
    CsrGraph local = sub.graph();
    long expected = 0;
    for (int a = 0; a < sub.nodeCount(); a++) {
      for (int b = 0; b < sub.nodeCount(); b++) {
        boolean inOriginal = g.allows(sub.originalId(a), sub.originalId(b));
        assertEquals(inOriginal, local.allows(a, b), "seed 5, local " + a + " <- " + b);
        expected += inOriginal ? 1 : 0;
      }
    }
    assertEquals(expected, local.edgeCount());
  }

  @Test
  void kHopInNeighbourhoodFollowsEdgesBackwards() {
    // a path 0 -> 1 -> 2 -> 3 -> 4 and 5 -> 9 unrelated
    CsrGraph g =
        CsrGraphBuilder.fromEdges(new int[] {0, 1, 2, 3, 5}, new int[] {1, 2, 3, 4, 9}, 10)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    assertArrayEquals(new int[] {4}, Subgraphs.inNeighbourhood(g, new int[] {4}, 0));
    assertArrayEquals(new int[] {3, 4}, Subgraphs.inNeighbourhood(g, new int[] {4}, 1));
    assertArrayEquals(new int[] {1, 2, 3, 4}, Subgraphs.inNeighbourhood(g, new int[] {4}, 3));
    assertArrayEquals(new int[] {0, 1, 2, 3, 4}, Subgraphs.inNeighbourhood(g, new int[] {4}, 9));
    assertArrayEquals(new int[] {1, 2, 5, 9}, Subgraphs.inNeighbourhood(g, new int[] {2, 9, 2}, 1));
    assertThrows(
        IllegalArgumentException.class, () -> Subgraphs.inNeighbourhood(g, new int[] {0}, -1));
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> Subgraphs.inNeighbourhood(g, new int[] {0, 10}, 1));
    assertTrue(ex.getMessage().contains("targets[1] = 10"), ex.getMessage());
  }

  /**
   * The k-hop subgraph gives the targets the same outputs after k layers of message passing as the
   * whole graph (follows from the definition of a k-layer receptive field). Checked with a simple
   * mean-of-neighbours layer in float64.
   */
  @Test
  void kHopSubgraphReproducesTargetsOutputsAfterKLayers() {
    long seed = 31;
    CsrGraph g = RmatGenerator.withScale(12).edgeFactor(4).seed(seed).generateEdges().build();
    SplittableRandom random = new SplittableRandom(seed);
    double[] features = random.doubles(g.nodeCount(), -1, 1).toArray();
    int[] targets = random.ints(5, 0, g.nodeCount()).toArray();
    for (int hops = 0; hops <= 3; hops++) {
      Subgraph sub = Subgraphs.inNeighbourhoodSubgraph(g, targets, hops);
      double[] full = meanLayers(g, features, hops);
      double[] localFeatures = new double[sub.nodeCount()];
      for (int a = 0; a < sub.nodeCount(); a++) {
        localFeatures[a] = features[sub.originalId(a)];
      }
      double[] local = meanLayers(sub.graph(), localFeatures, hops);
      for (int t : targets) {
        assertEquals(
            full[t], local[sub.localId(t)], 1e-12, "seed " + seed + ", hops " + hops + ", " + t);
      }
      assertTrue(sub.nodeCount() <= g.nodeCount());
    }
  }

  private static double[] meanLayers(CsrGraph g, double[] x, int layers) {
    double[] h = x.clone();
    for (int l = 0; l < layers; l++) {
      double[] next = new double[h.length];
      for (int i = 0; i < g.nodeCount(); i++) {
        double sum = 0;
        for (int e = g.rowStart(i); e < g.rowEnd(i); e++) {
          sum += Math.tanh(h[g.column(e)] + 0.3);
        }
        next[i] = g.degree(i) == 0 ? h[i] : sum / g.degree(i);
      }
      h = next;
    }
    return h;
  }
}
