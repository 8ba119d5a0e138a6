package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Scaled dot-product attention on the per-head path (Vaswani et al. 2017, eq. 1) over the complete
 * pattern (scored from the transposed key table, {@link KeyColumns}) and over CSR graphs, for both
 * implementations of the inner loops: against the float64 reference for head shapes on and off the
 * vector width and for row lengths around the 8- and 64-entry groups and the 128-entry blocks, with
 * identical bits for 1 and 3 threads.
 */
class CsrDotProductPathTest {

  private static final ScoreFunction DOT = ScoreFunction.scaledDotProduct();

  private static final List<HeadShape> SHAPES =
      List.of(
          new HeadShape(4, 16, 16),
          new HeadShape(8, 8, 8),
          new HeadShape(2, 24, 8),
          new HeadShape(1, 64, 32),
          new HeadShape(3, 5, 7));

  private record Run(float[] out, float[] weights) {}

  private static Run run(
      AttentionPattern pattern, HeadShape shape, RowMath math, int threads, float[]... qkv) {
    CsrAttentionKernel kernel =
        new CsrAttentionKernel(threads, math, CsrKernelVariant.DEFAULT.withMinCostPerThread(1));
    float[] out = new float[pattern.nodeCount() * shape.valueWidth()];
    float[] weights = new float[Math.toIntExact(pattern.entryCount() * shape.heads())];
    kernel.attend(pattern, DOT, shape, qkv[0], qkv[1], qkv[2], out, weights);
    return new Run(out, weights);
  }

  private static void check(Random random, AttentionPattern pattern, HeadShape shape, long seed) {
    int n = pattern.nodeCount();
    float[] q = CsrAllHeadsPathTest.uniform(random, n * shape.keyWidth(), -2f, 2f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * shape.keyWidth(), -2f, 2f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * shape.valueWidth(), -1f, 1f);
    ReferenceAttention.Result want = ReferenceAttention.attend(pattern, DOT, shape, q, k, v);
    for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
      String where = math.name() + ", " + pattern + ", " + shape + ", seed=" + seed;
      Run one = run(pattern, shape, math, 1, q, k, v);
      double error = ReferenceAttention.relativeError(want.out(), one.out());
      assertTrue(error < 1e-5, where + ": relative error " + error);
      error = ReferenceAttention.relativeError(want.weights(), one.weights());
      assertTrue(error < 1e-5, where + ": weights' relative error " + error);
      Run three = run(pattern, shape, math, 3, q, k, v);
      assertArrayEquals(one.out(), three.out(), where + ": 1 and 3 threads");
      assertArrayEquals(one.weights(), three.weights(), where + ": 1 and 3 threads");
    }
  }

  @Test
  void completePatternMatchesReference() {
    long seed = 0xD07C0L;
    Random random = new Random(seed);
    for (HeadShape shape : SHAPES) {
      for (int n : new int[] {1, 2, 7, 8, 9, 63, 64, 65, 130, 300}) {
        check(random, CompletePattern.of(n), shape, seed);
      }
    }
  }

  @Test
  void csrGraphsMatchReference() {
    long seed = 0xD07C1L;
    Random random = new Random(seed);
    for (HeadShape shape : SHAPES) {
      for (int n : new int[] {1, 9, 70, 300}) {
        check(random, CsrAllHeadsPathTest.graph(random, n), shape, seed);
      }
      // rows of 0, 1, 7, 8, 9, 16, 17, 63, 64, 65, 128 and 129 consecutive sources
      check(random, runs(new int[] {0, 1, 7, 8, 9, 16, 17, 63, 64, 65, 128, 129}), shape, seed);
    }
  }

  /** Row i holds the {@code degrees[i]} sources from {@code i} on (wrapping): consecutive runs. */
  static CsrGraph runs(int[] degrees) {
    int n = 160;
    int[] offsets = new int[n + 1];
    int total = 0;
    for (int i = 0; i < n; i++) {
      total += degrees[i % degrees.length];
      offsets[i + 1] = total;
    }
    int[] columns = new int[total];
    for (int i = 0; i < n; i++) {
      int d = degrees[i % degrees.length];
      int from = Math.min(i, n - d);
      for (int t = 0; t < d; t++) {
        columns[offsets[i] + t] = from + t;
      }
    }
    return CsrGraph.of(offsets, columns);
  }
}
