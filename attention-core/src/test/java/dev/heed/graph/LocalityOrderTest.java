package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Node layouts ({@link CsrGraph#withLocalityOrder}): each order is a permutation, the renumbered
 * rows are the graph's rows under it, the graph keeps its ids and equality, and the orders do what
 * they are for: degree order puts the most-read sources first, and reverse Cuthill–McKee (Cuthill
 * &amp; McKee 1969) recovers a narrow band from a shuffled band graph.
 */
class LocalityOrderTest {

  @Test
  void layoutsAreRenumberingsOfTheSameRows() {
    long seed = 0x10CA1L;
    Random random = new Random(seed);
    int n = 500;
    int[] src = new int[4000];
    int[] dst = new int[src.length];
    for (int e = 0; e < src.length; e++) {
      // skewed sources, so degrees differ; some isolated nodes at the end
      src[e] = (int) (Math.pow(random.nextDouble(), 3) * (n - 20));
      dst[e] = random.nextInt(n - 20);
    }
    CsrGraph graph = CsrGraphBuilder.fromEdges(src, dst, n).build();
    for (LocalityOrder method : LocalityOrder.values()) {
      String where = method + ", seed=" + seed;
      CsrGraph ordered = graph.withLocalityOrder(method);
      assertEquals(graph, ordered, where + ": same rows and ids");
      assertTrue(graph.nodeLayout().isEmpty());
      NodeLayout layout = ordered.nodeLayout().orElseThrow();
      assertEquals(method, layout.method());
      int[] nodes = layout.nodes();
      int[] sorted = nodes.clone();
      Arrays.sort(sorted);
      for (int v = 0; v < n; v++) {
        assertEquals(v, sorted[v], where + ": a permutation");
      }
      int[] positionOf = new int[n];
      for (int p = 0; p < n; p++) {
        positionOf[nodes[p]] = p;
        assertEquals(nodes[p], layout.node(p));
      }
      CsrGraph rows = layout.rows();
      assertEquals(graph.entryCount(), rows.entryCount(), where);
      for (int p = 0; p < n; p++) {
        int node = nodes[p];
        int[] want = new int[graph.degree(node)];
        for (int t = 0; t < want.length; t++) {
          want[t] = positionOf[graph.column(graph.rowStart(node) + t)];
        }
        Arrays.sort(want);
        int[] got = Arrays.copyOfRange(rows.columns(), rows.rowStart(p), rows.rowEnd(p));
        assertArrayEquals(want, got, where + ", position " + p);
      }
    }
  }

  @Test
  void degreeOrderPutsTheMostReadSourcesFirst() {
    // node 3 is read by 4 rows, node 1 by 2, node 0 by 1, the others by none
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(
                new int[] {3, 3, 3, 3, 1, 1, 0}, new int[] {0, 1, 2, 4, 2, 4, 4}, 5)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    int[] nodes = graph.withLocalityOrder(LocalityOrder.DEGREE).nodeLayout().orElseThrow().nodes();
    assertArrayEquals(new int[] {3, 1, 0, 2, 4}, nodes);
  }

  @Test
  void reverseCuthillMcKeeRecoversABandFromShuffledIds() {
    long seed = 0xBA2DL;
    Random random = new Random(seed);
    int n = 2000;
    int[] shuffle = new int[n];
    for (int v = 0; v < n; v++) {
      shuffle[v] = v;
    }
    for (int v = n - 1; v > 0; v--) {
      int w = random.nextInt(v + 1);
      int t = shuffle[v];
      shuffle[v] = shuffle[w];
      shuffle[w] = t;
    }
    // a band of half-width 3 (each node linked to the next three), under shuffled ids
    int[] src = new int[3 * n];
    int[] dst = new int[3 * n];
    int e = 0;
    for (int v = 0; v < n; v++) {
      for (int d = 1; d <= 3 && v + d < n; d++) {
        src[e] = shuffle[v];
        dst[e++] = shuffle[v + d];
      }
    }
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(Arrays.copyOf(src, e), Arrays.copyOf(dst, e), n).build();
    CsrGraph rows =
        graph
            .withLocalityOrder(LocalityOrder.REVERSE_CUTHILL_MCKEE)
            .nodeLayout()
            .orElseThrow()
            .rows();
    assertTrue(bandwidth(graph) > n / 4, "the shuffled ids have a wide band: " + bandwidth(graph));
    // Cuthill-McKee's breadth-first levels of a band graph stay within a few band widths
    assertTrue(bandwidth(rows) <= 12, "bandwidth after the order: " + bandwidth(rows));
  }

  private static int bandwidth(CsrGraph g) {
    int width = 0;
    for (int i = 0; i < g.nodeCount(); i++) {
      for (int x = g.rowStart(i); x < g.rowEnd(i); x++) {
        width = Math.max(width, Math.abs(g.column(x) - i));
      }
    }
    return width;
  }
}
