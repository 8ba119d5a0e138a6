package dev.heed.attention;

import dev.heed.graph.AttentionPattern;

/**
 * A plain float64 evaluation of the attention equations, the reference every kernel is checked
 * against (by the tests, and on a user's machine by {@code heed verify}). Written for clarity, not
 * speed: O(n² · H · d) time whatever the pattern, so use it on small inputs only.
 *
 * <ul>
 *   <li>Additive (GAT): e_ij = LeakyReLU(q_i + k_j) — Veličković et al. 2018, eq. 1 with aᵀ[Wh_i ‖
 *       Wh_j] split into a target term a_targetᵀWh_i and a source term a_sourceᵀWh_j.
 *   <li>GATv2: e_ij = aᵀ LeakyReLU(q_i + k_j) — Brody et al. 2022, eq. for GATv2 scoring.
 *   <li>Scaled dot-product: e_ij = q_i·k_j / √d — Vaswani et al. 2017, eq. 1.
 *   <li>α_ij = softmax over the allowed j of row i, computed with the row maximum subtracted
 *       (common practice); out_i = Σ_j α_ij v_j. Rows with no allowed j give zeros.
 * </ul>
 *
 * <p>Thread safety: stateless; safe from any thread.
 */
public final class ReferenceAttention {

  private ReferenceAttention() {}

  /**
   * Result of a reference evaluation, in the kernel's layouts but in float64.
   *
   * @param out the attention output, {@code n * heads * valueDim}
   * @param weights the weights, {@code entryCount * heads}, or null when that exceeds 50 million
   */
  public record Result(double[] out, double[] weights) {}

  /**
   * Returns the score of one pair for one head, in float64.
   *
   * @param score the score function
   * @param shape the head shape
   * @param query target-side terms, not modified
   * @param key source-side terms, not modified
   * @param i target node
   * @param j source node
   * @param h head
   * @return e_ij for head h
   */
  public static double score(
      ScoreFunction score, HeadShape shape, float[] query, float[] key, int i, int j, int h) {
    int dk = shape.keyDim();
    int qi = (i * shape.heads() + h) * dk;
    int kj = (j * shape.heads() + h) * dk;
    if (score instanceof ScoreFunction.Additive a) {
      return leakyRelu((double) query[qi] + key[kj], a.negativeSlope());
    } else if (score instanceof ScoreFunction.Gatv2 g) {
      double s = 0;
      for (int k = 0; k < dk; k++) {
        s +=
            (double) g.attention(h * dk + k)
                * leakyRelu((double) query[qi + k] + key[kj + k], g.negativeSlope());
      }
      return s;
    } else {
      double s = 0;
      for (int k = 0; k < dk; k++) {
        s += (double) query[qi + k] * key[kj + k];
      }
      return s / Math.sqrt(dk);
    }
  }

  /**
   * Returns LeakyReLU of {@code x} in float64.
   *
   * @param x input
   * @param slope negative slope
   * @return x if positive, else slope·x
   */
  public static double leakyRelu(double x, double slope) {
    return x > 0 ? x : slope * x;
  }

  /**
   * Evaluates attention over {@code pattern}. Weights come back entry-major as the kernel writes
   * them: for a CSR pattern in CSR entry order, for the complete pattern row-major. Inputs are not
   * modified.
   *
   * @param pattern the allowed pairs
   * @param score the score function
   * @param shape the head shape
   * @param query target-side terms
   * @param key source-side terms
   * @param value value rows
   * @return output and weights in float64
   */
  public static Result attend(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value) {
    int n = pattern.nodeCount();
    int heads = shape.heads();
    int dv = shape.valueDim();
    double[] out = new double[n * shape.valueWidth()];
    long entries = pattern.entryCount();
    double[] weights = entries * heads <= 50_000_000L ? new double[(int) (entries * heads)] : null;
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
          e[t] = score(score, shape, query, key, i, sources[t], h);
          max = Math.max(max, e[t]);
        }
        double sum = 0;
        for (int t = 0; t < deg; t++) {
          e[t] = Math.exp(e[t] - max);
          sum += e[t];
        }
        for (int t = 0; t < deg; t++) {
          double alpha = e[t] / sum;
          if (weights != null) {
            weights[(entry + t) * heads + h] = alpha;
          }
          int vj = (sources[t] * heads + h) * dv;
          int oi = (i * heads + h) * dv;
          for (int k = 0; k < dv; k++) {
            out[oi + k] += alpha * value[vj + k];
          }
        }
      }
      entry += deg;
    }
    return new Result(out, weights);
  }

  /**
   * Returns the reference as an {@link AttentionKernel}: {@link #attend} after {@link
   * AttentionKernels#checkCall}, its outputs and weights rounded to float32. Its {@link
   * AttentionKernel#path()} says {@link ComputePath#SPARSE}, since it reads only the allowed pairs'
   * scores into each row's softmax. For small inputs: O(n² · H · d) per call whatever the pattern.
   * Model check vectors are compared on it (see {@code dev.heed.model.CheckVectors}).
   *
   * @return a stateless kernel, safe from any thread
   */
  public static AttentionKernel kernel() {
    return RoundedKernel.INSTANCE;
  }

  /** {@link #attend} rounded into a kernel's float32 arrays. */
  private enum RoundedKernel implements AttentionKernel {
    INSTANCE;

    @Override
    public ComputePath path() {
      return ComputePath.SPARSE;
    }

    @Override
    public String describe() {
      return "float64 reference attention";
    }

    @Override
    public void attend(
        AttentionPattern pattern,
        ScoreFunction score,
        HeadShape shape,
        float[] query,
        float[] key,
        float[] value,
        float[] out,
        float[] weights) {
      AttentionKernels.checkCall(pattern, score, shape, query, key, value, out, weights);
      Result r = ReferenceAttention.attend(pattern, score, shape, query, key, value);
      round(r.out(), out);
      if (weights != null) {
        round(r.weights(), weights);
      }
    }

    private static void round(double[] from, float[] to) {
      for (int i = 0; i < to.length; i++) {
        to[i] = (float) from[i];
      }
    }
  }

  /**
   * Returns the largest absolute difference divided by the largest absolute reference value (a
   * norm-wise relative error; element-wise relative error is meaningless near zero).
   *
   * @param reference the float64 values
   * @param actual the values to check, same length
   * @return the relative error
   * @throws IllegalArgumentException if the lengths differ
   */
  public static double relativeError(double[] reference, float[] actual) {
    if (reference.length != actual.length) {
      throw new IllegalArgumentException(
          "lengths differ: reference " + reference.length + " != actual " + actual.length);
    }
    double maxDiff = 0;
    double maxRef = 0;
    for (int i = 0; i < reference.length; i++) {
      maxDiff = Math.max(maxDiff, Math.abs(reference[i] - actual[i]));
      maxRef = Math.max(maxRef, Math.abs(reference[i]));
    }
    return maxRef == 0 ? maxDiff : maxDiff / maxRef;
  }
}
