package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** Work splitting by entry count on power-law rows, and thread-count independence. */
class CsrWorkSplitTest {

  /** Row 0 is a hub holding every node (most of the edges); the others have 0 to 3 sources. */
  private static CsrGraph hubGraph(Random random, int n) {
    int[] offsets = new int[n + 1];
    int[] columns = new int[n + 3 * n];
    int e = 0;
    for (int j = 0; j < n; j++) {
      columns[e++] = j;
    }
    offsets[1] = e;
    for (int i = 1; i < n; i++) {
      int degree = random.nextInt(4) == 0 ? 1 + random.nextInt(3) : random.nextInt(2);
      int first = random.nextInt(n - 3);
      for (int d = 0; d < degree; d++) {
        columns[e++] = first + d;
      }
      offsets[i + 1] = e;
    }
    return CsrGraph.of(offsets, Arrays.copyOf(columns, e));
  }

  @Test
  void hubRowGivesIdenticalBitsForOneToFourThreadsAndMatchesReference() {
    // 8 x 8 takes the per-head path's loads ahead (64-float key and value rows); 4 x 8 does not
    for (HeadShape shape : List.of(new HeadShape(4, 8, 8), new HeadShape(8, 8, 8))) {
      long seed = 0xB0B0L + shape.heads();
      Random random = new Random(seed);
      int n = 3000;
      CsrGraph graph = hubGraph(random, n);
      assertTrue(graph.degree(0) * 2 > graph.edgeCount(), "the hub should hold most edges");
      ScoreFunction score = ScoreFunction.scaledDotProduct();
      float[] q = uniform(random, n * shape.keyWidth());
      float[] k = uniform(random, n * shape.keyWidth());
      float[] v = uniform(random, n * shape.valueWidth());
      for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
        float[] firstOut = null;
        float[] firstWeights = null;
        for (int threads = 1; threads <= 4; threads++) {
          float[] out = new float[n * shape.valueWidth()];
          float[] weights = new float[graph.edgeCount() * shape.heads()];
          new CsrAttentionKernel(threads, math, CsrKernelVariant.DEFAULT.withMinCostPerThread(1))
              .attend(graph, score, shape, q, k, v, out, weights);
          String where = math.name() + ", " + shape + ", " + threads + " threads, seed=" + seed;
          if (firstOut == null) {
            firstOut = out;
            firstWeights = weights;
            ReferenceAttention.Result want =
                ReferenceAttention.attend(graph, score, shape, q, k, v);
            double error = ReferenceAttention.relativeError(want.out(), out);
            assertTrue(error < 1e-5, where + ": relative error " + error);
          } else {
            assertArrayEquals(firstOut, out, where);
            assertArrayEquals(firstWeights, weights, where);
          }
        }
      }
    }
  }

  @Test
  void partitionBalancesEntriesAndIsolatesTheHub() {
    Random random = new Random(0xB0B1L);
    int n = 5000;
    CsrGraph graph = hubGraph(random, n);
    int chunks = 4 * CsrAttentionKernel.CHUNKS_PER_THREAD;
    int[] bounds = CsrAttentionKernel.partitionRows(graph, chunks);
    assertEquals(0, bounds[0]);
    assertEquals(n, bounds[bounds.length - 1]);
    assertEquals(1, bounds[1], "the hub row (row 0) should be a chunk on its own");
    long total = graph.edgeCount() + n;
    long maxRowCost = graph.degree(0) + 1L;
    for (int c = 0; c + 1 < bounds.length; c++) {
      assertTrue(bounds[c] < bounds[c + 1], "bounds must increase: " + Arrays.toString(bounds));
      long cost =
          graph.rowStart(bounds[c + 1] - 1)
              + graph.degree(bounds[c + 1] - 1)
              - graph.rowStart(bounds[c])
              + (bounds[c + 1] - bounds[c]);
      assertTrue(
          cost <= total / chunks + maxRowCost,
          "chunk " + c + " costs " + cost + ", more than its share " + total / chunks);
    }
    // the rows after the hub are light: they must still be split into several chunks
    assertTrue(bounds.length - 1 >= 4, "only " + (bounds.length - 1) + " chunks");
    int[] uniform = CsrAttentionKernel.partitionRows(CompletePattern.of(100), 8);
    assertArrayEquals(new int[] {0, 13, 25, 38, 50, 63, 75, 88, 100}, uniform);
  }

  // Beyond the contract: inputs near Float.MAX_VALUE overflow q + k and q·k in float32; the
  // kernel rescores those pairs in float64 and clamps, so outputs stay finite convex combinations.
  @Test
  void floatOverflowInScoresStaysFinite() {
    Random random = new Random(0xB0B2L);
    int n = 40;
    CsrGraph graph = hubGraph(random, n);
    for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
      for (ScoreFunction score :
          List.of(
              ScoreFunction.additive(0f),
              ScoreFunction.gatv2(0f, new float[] {1f, 0f, -1f, 2f, 0.5f, 0f, 3f, -2f}),
              ScoreFunction.scaledDotProduct())) {
        HeadShape shape = new HeadShape(2, score instanceof ScoreFunction.Additive ? 1 : 4, 3);
        float[] q = new float[n * shape.keyWidth()];
        float[] k = new float[n * shape.keyWidth()];
        for (int x = 0; x < q.length; x++) {
          q[x] =
              (random.nextBoolean() ? 1 : -1)
                  * Float.MAX_VALUE
                  * (0.6f + 0.4f * random.nextFloat());
          k[x] =
              (random.nextBoolean() ? 1 : -1)
                  * Float.MAX_VALUE
                  * (0.6f + 0.4f * random.nextFloat());
        }
        float[] v = uniform(random, n * shape.valueWidth());
        float[] out = new float[n * shape.valueWidth()];
        float[] weights = new float[graph.edgeCount() * shape.heads()];
        new CsrAttentionKernel(2, math, CsrKernelVariant.DEFAULT.withMinCostPerThread(1))
            .attend(graph, score, shape, q, k, v, out, weights);
        for (float o : out) {
          assertTrue(Float.isFinite(o) && Math.abs(o) <= 1f, math.name() + " " + score + ": " + o);
        }
        for (float w : weights) {
          assertTrue(w >= 0f && w <= 1f, math.name() + " " + score + ": weight " + w);
        }
      }
    }
  }

  private static float[] uniform(Random random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = 2f * random.nextFloat() - 1f;
    }
    return a;
  }
}
