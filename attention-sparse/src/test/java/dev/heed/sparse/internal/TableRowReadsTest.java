package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.BitSet;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The packed node table holds rows only for the sources of rows of two or more entries ({@link
 * TableRowReads}); every other node's inputs are still checked, and every layout gives the results
 * it gives when every row is filled: the exact layout the unpacked path's bits, the factored
 * layouts the unpacked path's outputs within the bounds that {@link CsrAllHeadsPathTest} and {@link
 * Bfloat16RowsTest} state (those tests check the unpacked path against the float64 reference of
 * GAT, Veličković et al. 2018, eqs. 1-4). A row of one entry is that source's value row, bit for
 * bit (softmax over one score is exactly 1).
 */
class TableRowReadsTest {

  private static final HeadShape SHAPE = new HeadShape(8, 1, 8);
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);

  /**
   * A graph where many nodes no longer row reads: empty rows, rows of one entry (the node itself or
   * another), short and long rows whose sources are drawn from a third of the nodes, in runs and
   * alone, so that the table's fill meets read and unread nodes at every position of its ranges.
   */
  static CsrGraph mixedGraph(Random random, int n) {
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * 21 + (n / 23 + 1) * 2 * CsrPass.BLOCK];
    int e = 0;
    for (int i = 0; i < n; i++) {
      int kind = (i / 7) % 2 == 0 ? i % 5 : 1; // runs of rows of one entry, itself
      int[] row =
          switch (kind) {
            case 0 -> new int[0];
            case 1 -> new int[] {i};
            case 2 -> new int[] {random.nextInt(n)};
            default -> {
              int degree =
                  i % 23 == 3
                      ? CsrPass.BLOCK + 1 + random.nextInt(CsrPass.BLOCK)
                      : 2 + random.nextInt(19);
              yield random
                  .ints(0, n)
                  .filter(c -> c % 3 == 0)
                  .distinct()
                  .limit(Math.min(degree, n / 3))
                  .sorted()
                  .toArray();
            }
          };
      System.arraycopy(row, 0, columns, e, row.length);
      e += row.length;
      offsets[i + 1] = e;
    }
    return CsrGraph.of(offsets, Arrays.copyOf(columns, e));
  }

  /** The definition, row by row. */
  private static BitSet naiveReads(CsrGraph graph) {
    BitSet read = new BitSet(graph.nodeCount());
    for (int i = 0; i < graph.nodeCount(); i++) {
      if (graph.degree(i) >= 2) {
        for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
          read.set(graph.column(e));
        }
      }
    }
    return read;
  }

  @Test
  void readNodesAreTheSourcesOfRowsOfTwoOrMoreEntriesAndAreKeptPerGraph() {
    long seed = 0x7AB1EL;
    Random random = new Random(seed);
    for (int n : new int[] {1, 2, 63, 64, 65, 700}) {
      CsrGraph graph = mixedGraph(random, n);
      BitSet want = naiveReads(graph);
      assertEquals(want, TableRowReads.compute(graph, 1), "n=" + n + ", seed=" + seed);
      for (int threads = 2; threads <= 3; threads++) {
        assertEquals(want, TableRowReads.compute(graph, threads), "n=" + n + ", " + threads);
      }
      BitSet first = TableRowReads.of(graph, 2);
      assertEquals(want, first, "n=" + n);
      assertSame(first, TableRowReads.of(graph, 2), "n=" + n + ": the set is kept for the graph");
    }
    // graphs are told apart by identity: an equal graph is another graph, and more graphs than the
    // cache holds still get their own sets
    CsrGraph a = mixedGraph(new Random(seed), 300);
    CsrGraph b = CsrGraph.of(a.rowOffsets(), a.columns());
    assertEquals(a, b);
    BitSet forA = TableRowReads.of(a, 1);
    for (int g = 0; g < TableRowReads.SLOTS + 2; g++) {
      CsrGraph other = mixedGraph(random, 100 + g);
      assertEquals(naiveReads(other), TableRowReads.of(other, 2), "graph " + g);
    }
    assertEquals(forA, TableRowReads.of(b, 1));
    assertEquals(naiveReads(a), TableRowReads.of(a, 1));
  }

  @Test
  void everyLayoutGivesItsResultsWhenOnlyReadRowsAreFilled() {
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    long seed = 0x7AB1FL;
    Random random = new Random(seed);
    int n = TableRowReads.MIN_NODES + 1500; // the kernel skips unread rows from MIN_NODES on
    CsrGraph graph = mixedGraph(random, n);
    int unread = n - naiveReads(graph).cardinality();
    assertTrue(unread > n / 2, "the graph must leave most nodes unread, left " + unread);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    float[] v0 = v.clone();
    // the unpacked path stands in for the float64 reference here (O(n^2) at this size);
    // CsrAllHeadsPathTest checks it against that reference
    float[] absV = new float[v.length];
    for (int x = 0; x < v.length; x++) {
      absV[x] = Math.abs(v[x]);
    }
    float[] weightedAbs =
        run(
            CsrAllHeadsPathTest.packing(1, false, true, NodeRowPrecision.FLOAT32),
            graph,
            q,
            k,
            absV)[0];
    float[][] firstOut = new float[3][];
    for (int threads = 1; threads <= 3; threads++) {
      String where = threads + " threads, seed=" + seed;
      float[][] unpacked =
          run(
              CsrAllHeadsPathTest.packing(threads, false, true, NodeRowPrecision.FLOAT32),
              graph,
              q,
              k,
              v);
      float[][] exact =
          run(
              CsrAllHeadsPathTest.packing(threads, true, false, NodeRowPrecision.FLOAT32),
              graph,
              q,
              k,
              v);
      assertArrayEquals(unpacked[0], exact[0], where + ": exact layout, outputs");
      assertArrayEquals(unpacked[1], exact[1], where + ": exact layout, weights");
      float[][] factored =
          run(
              CsrAllHeadsPathTest.packing(threads, true, true, NodeRowPrecision.FLOAT32),
              graph,
              q,
              k,
              v);
      double apart = CsrAllHeadsPathTest.relativeError(unpacked[0], factored[0]);
      assertTrue(apart < 1e-6, where + ": factored and exact outputs differ by " + apart);
      float[][] rounded =
          run(
              CsrAllHeadsPathTest.packing(threads, true, true, NodeRowPrecision.BFLOAT16),
              graph,
              q,
              k,
              v);
      assertArrayEquals(factored[1], rounded[1], where + ": bfloat16 weights are float32's");
      for (int x = 0; x < rounded[0].length; x++) {
        double bound = (0x1p-8 + 0x1p-16) * weightedAbs[x];
        double off = Math.abs(rounded[0][x] - unpacked[0][x]);
        if (!(off <= bound)) {
          fail(where + ": bfloat16 output " + x + " off by " + off + ", bound " + bound);
        }
      }
      float[][] outs = {exact[0], factored[0], rounded[0]};
      for (int layout = 0; layout < 3; layout++) {
        if (firstOut[layout] == null) {
          firstOut[layout] = outs[layout];
        }
        assertArrayEquals(firstOut[layout], outs[layout], where + ", layout " + layout);
        for (int i = 0; i < n; i++) {
          if (graph.degree(i) == 1) {
            int c = graph.column(graph.rowStart(i));
            int from = c * SHAPE.valueWidth();
            int at = i * SHAPE.valueWidth();
            if (!Arrays.equals(
                v, from, from + SHAPE.valueWidth(), outs[layout], at, at + SHAPE.valueWidth())) {
              fail(where + ", layout " + layout + ": row " + i + " of one entry");
            }
          }
        }
      }
    }
    assertArrayEquals(v0, v, "the kernel must not modify value");
  }

  @Test
  void nonFiniteInputsOfUnreadNodesAreStillRejected() {
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    long seed = 0x7AB20L;
    Random random = new Random(seed);
    int n = TableRowReads.MIN_NODES + 500;
    CsrGraph graph = mixedGraph(random, n);
    BitSet read = naiveReads(graph);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    int[] unread = {read.nextClearBit(0), read.previousClearBit(n - 1), read.nextClearBit(n / 2)};
    for (int node : unread) {
      for (String name : new String[] {"query", "key", "value"}) {
        float[] target = name.equals("query") ? q : name.equals("key") ? k : v;
        int width = name.equals("value") ? SHAPE.valueWidth() : SHAPE.keyWidth();
        int at = node * width + width - 1;
        float saved = target[at];
        target[at] = Float.NaN;
        float[] out = new float[n * SHAPE.valueWidth()];
        String want = CsrAllHeadsPathTest.checkCallMessage(graph, q, k, v, out);
        for (int threads = 1; threads <= 3; threads++) {
          for (int layout = 0; layout < 3; layout++) {
            CsrAttentionKernel kernel =
                CsrAllHeadsPathTest.packing(
                    threads,
                    true,
                    layout > 0,
                    layout == 2 ? NodeRowPrecision.BFLOAT16 : NodeRowPrecision.FLOAT32);
            String where =
                name + " of unread node " + node + ", " + threads + " threads, layout " + layout;
            CsrAllHeadsPathTest.assertRejectedBeforeOutput(
                kernel, graph, q, k, v, out, want, where);
          }
        }
        target[at] = saved;
      }
    }
  }

  /** Outputs and weights of one call. */
  private static float[][] run(
      CsrAttentionKernel kernel, CsrGraph graph, float[] q, float[] k, float[] v) {
    float[] out = new float[graph.nodeCount() * SHAPE.valueWidth()];
    float[] weights = new float[Math.toIntExact(graph.entryCount() * SHAPE.heads())];
    kernel.attend(graph, GAT, SHAPE, q, k, v, out, weights);
    return new float[][] {out, weights};
  }
}
