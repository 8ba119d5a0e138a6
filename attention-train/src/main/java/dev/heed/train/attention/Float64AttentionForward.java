package dev.heed.train.attention;

import dev.heed.attention.HeadShape;
import dev.heed.graph.AttentionPattern;

/**
 * A plain float64 evaluation of the attention equations, independent of the serving kernels: for
 * gradient checks (finite differences need a forward pass without float32 rounding) and for the
 * check vectors {@link dev.heed.train.TrainingNetwork#toModel} attaches to exported models. Same
 * equations as the float64 reference of attention-core ({@code ReferenceAttention}), written
 * separately: additive (Veličković et al. 2018, eq. 1), GATv2 (Brody et al. 2022), scaled
 * dot-product (Vaswani et al. 2017, eq. 1), softmax with the row maximum subtracted (common
 * practice); a row with no sources gives zeros. Weights entry-major in the pattern's entry order.
 * Exponentials use {@link StrictMath}, so results are the same bits on every JVM.
 *
 * <p>Cost: O(n² + E·H·d) per call (every pair's {@code allows} is asked): for small graphs only.
 *
 * <p>Thread safety: stateless; safe from any thread.
 */
public final class Float64AttentionForward implements AttentionForward {

  @Override
  public void attend(
      AttentionPattern pattern,
      AttentionScore score,
      HeadShape shape,
      double[] query,
      double[] key,
      double[] value,
      double[] out,
      double[] weights) {
    score.checkCompatible(shape);
    int n = pattern.nodeCount();
    int heads = shape.heads();
    int dk = shape.keyDim();
    int dv = shape.valueDim();
    checkLength("query", query.length, (long) n * shape.keyWidth());
    checkLength("key", key.length, (long) n * shape.keyWidth());
    checkLength("value", value.length, (long) n * shape.valueWidth());
    checkLength("out", out.length, (long) n * shape.valueWidth());
    checkLength("weights", weights.length, pattern.entryCount() * heads);
    java.util.Arrays.fill(out, 0.0);
    int entry = 0;
    int[] sources = new int[n];
    for (int i = 0; i < n; i++) {
      int deg = 0;
      for (int j = 0; j < n; j++) {
        if (pattern.allows(i, j)) {
          sources[deg++] = j;
        }
      }
      for (int h = 0; h < heads; h++) {
        if (deg == 0) {
          continue;
        }
        double[] e = new double[deg];
        double max = Double.NEGATIVE_INFINITY;
        for (int t = 0; t < deg; t++) {
          e[t] =
              score(score, query, key, (i * heads + h) * dk, (sources[t] * heads + h) * dk, h, dk);
          max = Math.max(max, e[t]);
        }
        double sum = 0;
        for (int t = 0; t < deg; t++) {
          e[t] = StrictMath.exp(e[t] - max);
          sum += e[t];
        }
        for (int t = 0; t < deg; t++) {
          double alpha = e[t] / sum;
          weights[(entry + t) * heads + h] = alpha;
          int vj = (sources[t] * heads + h) * dv;
          int oi = (i * heads + h) * dv;
          for (int c = 0; c < dv; c++) {
            out[oi + c] += alpha * value[vj + c];
          }
        }
      }
      entry += deg;
    }
  }

  private static void checkLength(String what, int length, long expected) {
    if (length != expected) {
      throw new IllegalArgumentException(
          what + " must have length " + expected + " for this pattern and shape, got " + length);
    }
  }

  private static double score(
      AttentionScore score, double[] q, double[] k, int qi, int kj, int h, int dk) {
    switch (score.kind()) {
      case ADDITIVE:
        return leakyRelu(q[qi] + k[kj], score.negativeSlope());
      case GATV2:
        double s = 0;
        for (int c = 0; c < dk; c++) {
          s +=
              score.attention(h * dk + c) * leakyRelu(q[qi + c] + k[kj + c], score.negativeSlope());
        }
        return s;
      default:
        double d = 0;
        for (int c = 0; c < dk; c++) {
          d += q[qi + c] * k[kj + c];
        }
        return d / Math.sqrt(dk);
    }
  }

  private static double leakyRelu(double x, double slope) {
    return x > 0 ? x : slope * x;
  }
}
