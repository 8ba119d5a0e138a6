package dev.heed.train.attention;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.train.support.GradientCheck;
import dev.heed.train.support.TestGraphs;
import java.util.Random;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * The attention backward pass against central finite differences of a float64 forward pass, for the
 * three score functions (Veličković et al. 2018 eq. 1; Brody et al. 2022; Vaswani et al. 2017 eq.
 * 1), over a CSR graph with an isolated node and over the complete pattern, with and without a
 * dropout mask on α. Loss L = Σ R ⊙ out for a random R, so dL/dOut = R.
 */
class AttentionBackwardTest {

  private static final double TOLERANCE = 1e-4;

  static Stream<Arguments> cases() {
    Stream.Builder<Arguments> b = Stream.builder();
    for (AttentionScore.Kind kind : AttentionScore.Kind.values()) {
      for (boolean complete : new boolean[] {false, true}) {
        for (boolean dropout : new boolean[] {false, true}) {
          b.add(Arguments.of(kind, complete, dropout));
        }
      }
    }
    return b.build();
  }

  @ParameterizedTest(name = "{0} complete={1} dropout={2}")
  @MethodSource("cases")
  void gradientsMatchFiniteDifferences(
      AttentionScore.Kind kind, boolean complete, boolean dropout) {
    long seed = 1000 + kind.ordinal() * 10 + (complete ? 2 : 0) + (dropout ? 1 : 0);
    Random random = new Random(seed);
    int n = 7;
    int heads = 2;
    int dk = kind == AttentionScore.Kind.ADDITIVE ? 1 : 3;
    int dv = 4;
    HeadShape shape = new HeadShape(heads, dk, dv);
    AttentionPattern pattern =
        complete ? CompletePattern.of(n) : TestGraphs.random(n, 0.4, 3, random);
    double[] q = TestGraphs.uniform(n * heads * dk, random);
    double[] k = TestGraphs.uniform(n * heads * dk, random);
    double[] v = TestGraphs.uniform(n * heads * dv, random);
    double[] a = TestGraphs.uniform(heads * dk, random);
    double[] r = TestGraphs.uniform(n * heads * dv, random);
    int weightCount = (int) pattern.entryCount() * heads;
    double[] mask = null;
    if (dropout) {
      mask = new double[weightCount];
      for (int i = 0; i < weightCount; i++) {
        mask[i] = random.nextDouble() < 0.3 ? 0.0 : 1.0 / 0.7;
      }
    }
    double[] dropMask = mask;
    Float64AttentionForward forward = new Float64AttentionForward();
    java.util.function.Supplier<AttentionScore> scoreOf =
        () ->
            switch (kind) {
              case ADDITIVE -> AttentionScore.additive(0.2);
              case GATV2 -> AttentionScore.gatv2(0.2, a);
              case SCALED_DOT_PRODUCT -> AttentionScore.scaledDotProduct();
            };
    java.util.function.DoubleSupplier loss =
        () -> {
          double[] out = new double[n * heads * dv];
          double[] w = new double[weightCount];
          AttentionScore s = scoreOf.get();
          forward.attend(pattern, s, shape, q, k, v, out, w);
          if (dropMask != null) {
            double[] f = new double[w.length];
            for (int i = 0; i < w.length; i++) {
              f[i] = w[i] * dropMask[i];
            }
            AttentionBackward.aggregate(pattern, shape, f, v, out);
          }
          return GradientCheck.dot(r, out);
        };

    AttentionScore score = scoreOf.get();
    double[] out = new double[n * heads * dv];
    double[] w = new double[weightCount];
    forward.attend(pattern, score, shape, q, k, v, out, w);
    double[] dq = new double[q.length];
    double[] dk2 = new double[k.length];
    double[] dv2 = new double[v.length];
    double[] da = new double[a.length];
    AttentionBackward.backward(pattern, score, shape, q, k, v, w, mask, r, dq, dk2, dv2, da);

    String where = kind + " complete=" + complete + " dropout=" + dropout + " seed=" + seed;
    check("dq " + where, dq, GradientCheck.numeric(q, loss));
    check("dk " + where, dk2, GradientCheck.numeric(k, loss));
    check("dv " + where, dv2, GradientCheck.numeric(v, loss));
    if (kind == AttentionScore.Kind.GATV2) {
      check("da " + where, da, GradientCheck.numeric(a, loss));
    }
  }

  private static void check(String what, double[] analytic, double[] numeric) {
    double error = GradientCheck.relativeError(analytic, numeric);
    assertTrue(error < TOLERANCE, what + ": relative error " + error);
  }

  /** Common practice: attention over the complete pattern equals attention over a complete CSR. */
  @Test
  void completePatternMatchesCompleteCsrGraph() {
    long seed = 77;
    Random random = new Random(seed);
    int n = 6;
    HeadShape shape = new HeadShape(3, 2, 2);
    int[] offsets = new int[n + 1];
    int[] cols = new int[n * n];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = (i + 1) * n;
      for (int j = 0; j < n; j++) {
        cols[i * n + j] = j;
      }
    }
    CsrGraph csr = CsrGraph.of(offsets, cols);
    double[] q = TestGraphs.uniform(n * shape.keyWidth(), random);
    double[] k = TestGraphs.uniform(n * shape.keyWidth(), random);
    double[] v = TestGraphs.uniform(n * shape.valueWidth(), random);
    double[] r = TestGraphs.uniform(n * shape.valueWidth(), random);
    AttentionScore score = AttentionScore.scaledDotProduct();
    double[][] grads = new double[2][];
    int index = 0;
    for (AttentionPattern p : new AttentionPattern[] {csr, CompletePattern.of(n)}) {
      double[] out = new double[n * shape.valueWidth()];
      double[] w = new double[n * n * shape.heads()];
      new Float64AttentionForward().attend(p, score, shape, q, k, v, out, w);
      double[] dq = new double[q.length];
      double[] dk = new double[k.length];
      double[] dv = new double[v.length];
      AttentionBackward.backward(p, score, shape, q, k, v, w, null, r, dq, dk, dv, null);
      double[] all = new double[dq.length * 2 + dv.length];
      System.arraycopy(dq, 0, all, 0, dq.length);
      System.arraycopy(dk, 0, all, dq.length, dk.length);
      System.arraycopy(dv, 0, all, 2 * dq.length, dv.length);
      grads[index++] = all;
    }
    assertArrayEquals(grads[0], grads[1], 0.0, "seed " + seed);
  }

  /**
   * The kernel-backed forward pass (float32 kernel, here attention-core's float64 reference kernel
   * rounded to float32) agrees with the float64 equations to float32 accuracy.
   */
  @Test
  void kernelForwardAgreesWithFloat64Equations() {
    long seed = 91;
    Random random = new Random(seed);
    int n = 9;
    for (AttentionScore.Kind kind : AttentionScore.Kind.values()) {
      int dk = kind == AttentionScore.Kind.ADDITIVE ? 1 : 4;
      HeadShape shape = new HeadShape(2, dk, 3);
      CsrGraph g = TestGraphs.random(n, 0.3, 2, random);
      double[] q = TestGraphs.uniform(n * shape.keyWidth(), random);
      double[] k = TestGraphs.uniform(n * shape.keyWidth(), random);
      double[] v = TestGraphs.uniform(n * shape.valueWidth(), random);
      double[] a = TestGraphs.uniform(shape.keyWidth(), random);
      AttentionScore score =
          switch (kind) {
            case ADDITIVE -> AttentionScore.additive(0.2);
            case GATV2 -> AttentionScore.gatv2(0.2, a);
            case SCALED_DOT_PRODUCT -> AttentionScore.scaledDotProduct();
          };
      double[] out64 = new double[n * shape.valueWidth()];
      double[] w64 = new double[g.edgeCount() * 2];
      new Float64AttentionForward().attend(g, score, shape, q, k, v, out64, w64);
      double[] out32 = new double[out64.length];
      double[] w32 = new double[w64.length];
      new KernelAttentionForward(new ReferenceAttentionKernel())
          .attend(g, score, shape, q, k, v, out32, w32);
      double eo = GradientCheck.relativeError(out32, out64);
      double ew = GradientCheck.relativeError(w32, w64);
      assertTrue(
          eo < 1e-5 && ew < 1e-5, kind + " seed " + seed + ": out " + eo + ", weights " + ew);
    }
  }

  @Test
  void rejectsWrongLengthsWithTheArrayName() {
    CsrGraph g = TestGraphs.random(4, 0.5, -1, new Random(5));
    HeadShape shape = new HeadShape(1, 2, 2);
    double[] x = new double[8];
    double[] w = new double[g.edgeCount()];
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                AttentionBackward.backward(
                    g,
                    AttentionScore.scaledDotProduct(),
                    shape,
                    x,
                    x,
                    x,
                    new double[w.length + 1],
                    null,
                    x,
                    new double[8],
                    new double[8],
                    new double[8],
                    null));
    assertTrue(e.getMessage().contains("weights"), e.getMessage());
  }
}
