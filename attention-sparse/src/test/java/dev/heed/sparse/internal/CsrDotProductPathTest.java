package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
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
 * identical bits for 1 and 3 threads. Rows of 4 heads × 16 floats that the vector loops compute
 * whole ({@link PerHeadMath#dotRow}) are checked at odd and even lengths, at the longest such row
 * and one entry past it, and with a score that overflows (the row is then taken block by block).
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

  @Test
  void wholeRowsAroundTheirLongestLengthMatchReference() {
    long seed = 0xD07C2L;
    Random random = new Random(seed);
    HeadShape shape = new HeadShape(4, 16, 16);
    assertTrue(
        RowMaths.preferred().perHead().scoresWholeRows(4, 16, 16),
        "the vector loops compute rows of 4 x 16 whole");
    int longest = PerHeadPass.ROW_ENTRIES;
    check(
        random,
        runs(new int[] {1, 2, 3, longest - 1, longest, longest + 1}, longest + 40),
        shape,
        seed);
  }

  // A score past the float range in a row computed whole: that row is taken block by block, which
  // recomputes the score in float64 and clamps it, so the entry takes all of its head's weight.
  @Test
  void wholeRowWithAnOverflowingScoreMatchesReference() {
    long seed = 0xD07C3L;
    Random random = new Random(seed);
    HeadShape shape = new HeadShape(4, 16, 16);
    CsrGraph graph = runs(new int[] {37, 38}, 160);
    int n = graph.nodeCount();
    float[] q = CsrAllHeadsPathTest.uniform(random, n * shape.keyWidth(), -2f, 2f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * shape.keyWidth(), -2f, 2f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * shape.valueWidth(), -1f, 1f);
    // node 5's query and node 9's key in head 2: a product of 1e40 in float64
    for (int x = 32; x < 48; x++) {
      q[5 * shape.keyWidth() + x] = 1e20f;
      k[9 * shape.keyWidth() + x] = 1e20f;
    }
    ReferenceAttention.Result want = ReferenceAttention.attend(graph, DOT, shape, q, k, v);
    for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
      Run got = run(graph, shape, math, 1, q, k, v);
      String where = math.name() + ", seed=" + seed;
      double error = ReferenceAttention.relativeError(want.out(), got.out());
      assertTrue(error < 1e-5, where + ": relative error " + error);
      error = ReferenceAttention.relativeError(want.weights(), got.weights());
      assertTrue(error < 1e-5, where + ": weights' relative error " + error);
      for (int x = 32; x < 48; x++) {
        assertEquals(v[9 * shape.valueWidth() + x], got.out()[5 * shape.valueWidth() + x], where);
      }
    }
  }

  /** {@link #runs(int[], int)} over 160 nodes. */
  static CsrGraph runs(int[] degrees) {
    return runs(degrees, 160);
  }

  /** Row i holds the {@code degrees[i]} sources from {@code i} on (wrapping): consecutive runs. */
  static CsrGraph runs(int[] degrees, int n) {
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
