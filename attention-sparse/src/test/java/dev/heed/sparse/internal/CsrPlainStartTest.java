package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The plain start ({@link CsrKernelVariant#plainStartWork()}): a JVM's first calls run the plain
 * loops, bit for bit as a kernel on the plain loops, until the work so far passes the limit, and
 * the Vector API loops after that, bit for bit as the default kernel; both match the float64
 * reference (Veličković et al. 2018, eqs. 1-4). The work counter belongs to the JVM, so each test
 * sets its limit from the count it finds.
 */
class CsrPlainStartTest {

  private static final HeadShape SHAPE = new HeadShape(8, 1, 8);
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);

  private static float[] attend(
      CsrAttentionKernel kernel, CsrGraph graph, float[] q, float[] k, float[] v) {
    float[] out = new float[graph.nodeCount() * SHAPE.valueWidth()];
    kernel.attend(graph, GAT, SHAPE, q, k, v, out, null);
    return out;
  }

  @Test
  void firstCallsRunThePlainLoopsThenTheVectorOnes() {
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    long seed = 0x57A27L;
    Random random = new Random(seed);
    int n = 600;
    CsrGraph graph = CsrAllHeadsPathTest.graph(random, n);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    long work = graph.entryCount() * SHAPE.heads();
    CsrKernelVariant base = CsrKernelVariant.DEFAULT.withMinCostPerThread(1);
    float[] plain = attend(new CsrAttentionKernel(2, RowMaths.scalar(), base), graph, q, k, v);
    float[] vectorOut = attend(new CsrAttentionKernel(2, vector, base), graph, q, k, v);
    // the per-head and the all-heads arithmetic round differently, so the bits tell which
    // loops ran
    assertFalse(Arrays.equals(plain, vectorOut), "plain and vector loops gave the same bits");
    ReferenceAttention.Result want = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, v);
    CsrAttentionKernel starting =
        new CsrAttentionKernel(
            2, vector, base.withPlainStartWork(CsrAttentionKernel.startedWork() + 2 * work));
    for (int call = 1; call <= 4; call++) {
      float[] got = attend(starting, graph, q, k, v);
      String where = "call " + call + ", seed=" + seed;
      assertArrayEquals(call <= 2 ? plain : vectorOut, got, where);
      double error = ReferenceAttention.relativeError(want.out(), got);
      assertTrue(error < 1e-5, where + ": out relative error " + error);
    }
  }

  @Test
  void aCallLargerThanThePlainStartRunsTheVectorLoops() {
    RowMath vector = RowMaths.preferred();
    Random random = new Random(11L);
    CsrGraph graph = CsrAllHeadsPathTest.graph(random, 50);
    long work = graph.entryCount() * SHAPE.heads();
    CsrAttentionKernel kernel =
        new CsrAttentionKernel(
            1,
            vector,
            CsrKernelVariant.DEFAULT.withPlainStartWork(
                CsrAttentionKernel.startedWork() + work - 1));
    assertSame(vector, kernel.loopsFor(graph, SHAPE));
    CsrAttentionKernel off =
        new CsrAttentionKernel(1, vector, CsrKernelVariant.DEFAULT.withPlainStartWork(0));
    assertSame(vector, off.loopsFor(graph, SHAPE), "0: no plain start");
  }

  @Test
  void bfloat16RowsKeepTheirTable() {
    RowMath vector = RowMaths.preferred();
    CsrGraph graph = CsrAllHeadsPathTest.graph(new Random(12L), 50);
    CsrAttentionKernel kernel =
        new CsrAttentionKernel(
            1,
            vector,
            CsrKernelVariant.DEFAULT
                .withNodeRows(NodeRowPrecision.BFLOAT16)
                .withPlainStartWork(Long.MAX_VALUE - 1));
    assertSame(vector, kernel.loopsFor(graph, SHAPE));
  }

  @Test
  void rejectsANegativePlainStart() {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class, () -> CsrKernelVariant.DEFAULT.withPlainStartWork(-1));
    assertTrue(e.getMessage().contains("plainStartWork must be at least 0"), e.getMessage());
  }
}
