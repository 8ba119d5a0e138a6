package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.LocalityOrder;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The CSR kernel over a graph with a node layout ({@link CsrGraph#withLocalityOrder}): outputs come
 * back at the caller's ids and match the float64 reference (Veličković et al. 2018, eqs. 1-4) as
 * the graph without a layout does, and the float32 factored path without a layout to within its
 * rounding (each row's sources are summed in another order); identical bits for 1 to 3 threads;
 * with bfloat16 rows, within the same bound as without a layout; a call with weights still gives
 * the weights of the caller's entries.
 */
class NodeLayoutKernelTest {

  private static final HeadShape SHAPE = new HeadShape(8, 1, 8);
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);

  @Test
  void layoutsGiveTheSameAttentionAtTheCallersIds() {
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    long seed = 0x1A40L;
    Random random = new Random(seed);
    int n = 800;
    CsrGraph graph = CsrAllHeadsPathTest.graph(random, n);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    ReferenceAttention.Result reference = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, v);
    float[] absV = v.clone();
    for (int x = 0; x < absV.length; x++) {
      absV[x] = Math.abs(absV[x]);
    }
    double[] weightedAbs = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, absV).out();
    float[] plain = attend(kernel(1, NodeRowPrecision.FLOAT32), graph, q, k, v);
    for (LocalityOrder method : LocalityOrder.values()) {
      CsrGraph ordered = graph.withLocalityOrder(method);
      float[] first = null;
      for (int threads = 1; threads <= 3; threads++) {
        String where = method + ", " + threads + " threads, seed=" + seed;
        float[] got = attend(kernel(threads, NodeRowPrecision.FLOAT32), ordered, q, k, v);
        if (first == null) {
          first = got;
          double error = ReferenceAttention.relativeError(reference.out(), got);
          assertTrue(error < 1e-5, where + ": relative error " + error);
          double apart = CsrAllHeadsPathTest.relativeError(plain, got);
          assertTrue(apart < 1e-6, where + ": differs from the graph without a layout by " + apart);
        } else {
          assertArrayEquals(first, got, where);
        }
        float[] rounded = attend(kernel(threads, NodeRowPrecision.BFLOAT16), ordered, q, k, v);
        for (int x = 0; x < rounded.length; x++) {
          double error = Math.abs(rounded[x] - reference.out()[x]);
          double bound = (0x1p-8 + 0x1p-16) * weightedAbs[x];
          assertTrue(error <= bound, where + ", bfloat16: output " + x + " off by " + error);
        }
      }
      // weights are indexed by the caller's entries: a call asking for them reads the graph as is
      float[] out = new float[n * SHAPE.valueWidth()];
      float[] weights = new float[Math.toIntExact(graph.entryCount() * SHAPE.heads())];
      kernel(2, NodeRowPrecision.FLOAT32).attend(ordered, GAT, SHAPE, q, k, v, out, weights);
      double error = ReferenceAttention.relativeError(reference.weights(), weights);
      assertTrue(error < 1e-5, method + ": weights relative error " + error);
    }
  }

  private static float[] attend(
      CsrAttentionKernel kernel, CsrGraph graph, float[] q, float[] k, float[] v) {
    float[] out = new float[graph.nodeCount() * SHAPE.valueWidth()];
    kernel.attend(graph, GAT, SHAPE, q, k, v, out, null);
    return out;
  }

  /** The default variant with the table at every size (as a layout or bfloat16 rows ask). */
  private static CsrAttentionKernel kernel(int threads, NodeRowPrecision rows) {
    return new CsrAttentionKernel(
        threads,
        RowMaths.preferred(),
        CsrKernelVariant.DEFAULT
            .withMinCostPerThread(1)
            .withMinPackedTableBytes(0)
            .withNodeRows(rows));
  }
}
