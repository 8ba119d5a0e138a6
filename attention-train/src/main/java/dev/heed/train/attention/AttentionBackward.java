package dev.heed.train.attention;

import dev.heed.attention.HeadShape;
import dev.heed.graph.AttentionPattern;
import java.util.Objects;

/**
 * Backward pass of multi-head attention over a pattern, in float64, for the three score functions
 * of {@link AttentionScore}. Given the forward inputs, the weights α the forward pass wrote, and
 * the gradient of a scalar loss with respect to the output, it accumulates the gradients with
 * respect to the query, key and value terms (and the GATv2 attention vector).
 *
 * <p>Per target row i and head h, with an optional dropout mask {@code m} on α (Veličković et al.
 * 2018, §3.3: dropout on the normalized attention coefficients), {@code α̃ = m ⊙ α} and {@code
 * out_i = Σ_j α̃_ij v_j}:
 *
 * <pre>
 *   dv_j  += α̃_ij · dOut_i
 *   dα_ij  = m_ij · (dOut_i · v_j)
 *   de_ij  = α_ij · (dα_ij − Σ_j' α_ij' dα_ij')          (softmax backward)
 *   additive: x = q_i + k_j;   dq_i += de·σ'(x);          dk_j += de·σ'(x)
 *   GATv2:    x = q_i + k_j;   dq_i += de·a⊙σ'(x);        dk_j += de·a⊙σ'(x);  da += de·σ(x)
 *   dot:      s = 1/√d;        dq_i += de·s·k_j;          dk_j += de·s·q_i
 * </pre>
 *
 * where σ is LeakyReLU with σ'(x) = 1 for x &gt; 0 and the negative slope otherwise (the same
 * branch as the forward's {@code x > 0 ? x : slope·x}). One pass per target row, in the row
 * structure of the forward kernel; α is never recomputed.
 *
 * <p>Cost: O(E·H·(keyDim + valueDim)) time, no allocation beyond O(1). Gradients are accumulated
 * ({@code +=}) so that callers can sum several contributions; clear them first for a fresh
 * gradient. Runs on the calling thread in a fixed order, so results are bit-reproducible.
 *
 * <p>Thread safety: stateless; calls on disjoint output arrays may run concurrently.
 */
public final class AttentionBackward {

  private AttentionBackward() {}

  /**
   * Accumulates the attention gradients.
   *
   * @param pattern input: the allowed pairs the forward pass ran over, n nodes
   * @param score input: the score function of the forward pass (its GATv2 vector in float64)
   * @param shape input: heads and widths
   * @param query input, not modified: {@code n * keyWidth}
   * @param key input, not modified: {@code n * keyWidth}
   * @param value input, not modified: {@code n * valueWidth}
   * @param weights input, not modified: α as the forward pass wrote it, {@code E * heads},
   *     entry-major
   * @param dropoutMask optional input, not modified, or null for none: per-weight factors, {@code E
   *     * heads}, entry-major; the forward output was {@code Σ_j mask·α·v} (use 0 or {@code 1/(1 −
   *     p)} for inverted dropout)
   * @param outGradient input, not modified: dLoss/dOut, {@code n * valueWidth}
   * @param queryGradient output, accumulated: {@code n * keyWidth}
   * @param keyGradient output, accumulated: {@code n * keyWidth}
   * @param valueGradient output, accumulated: {@code n * valueWidth}
   * @param attentionGradient output, accumulated, required for GATv2 and ignored (may be null)
   *     otherwise: {@code heads * keyDim}
   * @throws IllegalArgumentException if a length does not fit the pattern and shape, or the score
   *     does not fit the shape
   * @throws NullPointerException if a required argument is null
   */
  public static void backward(
      AttentionPattern pattern,
      AttentionScore score,
      HeadShape shape,
      double[] query,
      double[] key,
      double[] value,
      double[] weights,
      double[] dropoutMask,
      double[] outGradient,
      double[] queryGradient,
      double[] keyGradient,
      double[] valueGradient,
      double[] attentionGradient) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(score, "score");
    Objects.requireNonNull(shape, "shape");
    score.checkCompatible(shape);
    int n = pattern.nodeCount();
    long keyLength = (long) n * shape.keyWidth();
    long valueLength = (long) n * shape.valueWidth();
    long weightLength = pattern.entryCount() * shape.heads();
    checkLength("query", query, keyLength);
    checkLength("key", key, keyLength);
    checkLength("value", value, valueLength);
    checkLength("weights", weights, weightLength);
    if (dropoutMask != null) {
      checkLength("dropoutMask", dropoutMask, weightLength);
    }
    checkLength("outGradient", outGradient, valueLength);
    checkLength("queryGradient", queryGradient, keyLength);
    checkLength("keyGradient", keyGradient, keyLength);
    checkLength("valueGradient", valueGradient, valueLength);
    if (score.kind() == AttentionScore.Kind.GATV2) {
      checkLength("attentionGradient", attentionGradient, shape.keyWidth());
    }
    PatternRows rows = new PatternRows(pattern);
    int heads = shape.heads();
    int dk = shape.keyDim();
    int dv = shape.valueDim();
    double slope = score.negativeSlope();
    double scale = 1.0 / Math.sqrt(dk);
    for (int i = 0; i < n; i++) {
      int start = rows.start(i);
      int end = rows.end(i);
      for (int h = 0; h < heads; h++) {
        int outAt = (i * heads + h) * dv;
        // pass 1: dα (kept implicitly) and Σ α·dα; dv
        double weightedSum = 0;
        for (int e = start; e < end; e++) {
          int j = rows.source(i, e);
          int w = e * heads + h;
          int valueAt = (j * heads + h) * dv;
          double mask = dropoutMask == null ? 1.0 : dropoutMask[w];
          double alpha = weights[w];
          double dot = 0;
          for (int c = 0; c < dv; c++) {
            dot += outGradient[outAt + c] * value[valueAt + c];
            valueGradient[valueAt + c] += mask * alpha * outGradient[outAt + c];
          }
          weightedSum += alpha * mask * dot;
        }
        // pass 2: de, then through the score
        int queryAt = (i * heads + h) * dk;
        for (int e = start; e < end; e++) {
          int j = rows.source(i, e);
          int w = e * heads + h;
          int valueAt = (j * heads + h) * dv;
          int keyAt = (j * heads + h) * dk;
          double mask = dropoutMask == null ? 1.0 : dropoutMask[w];
          double alpha = weights[w];
          double dot = 0;
          for (int c = 0; c < dv; c++) {
            dot += outGradient[outAt + c] * value[valueAt + c];
          }
          double scoreGradient = alpha * (mask * dot - weightedSum);
          if (scoreGradient == 0) {
            continue;
          }
          switch (score.kind()) {
            case ADDITIVE -> {
              double x = query[queryAt] + key[keyAt];
              double g = x > 0 ? scoreGradient : slope * scoreGradient;
              queryGradient[queryAt] += g;
              keyGradient[keyAt] += g;
            }
            case GATV2 -> {
              int aAt = h * dk;
              for (int c = 0; c < dk; c++) {
                double x = query[queryAt + c] + key[keyAt + c];
                double a = score.attention(aAt + c);
                double g = x > 0 ? scoreGradient * a : scoreGradient * a * slope;
                queryGradient[queryAt + c] += g;
                keyGradient[keyAt + c] += g;
                attentionGradient[aAt + c] += scoreGradient * (x > 0 ? x : slope * x);
              }
            }
            case SCALED_DOT_PRODUCT -> {
              double g = scoreGradient * scale;
              for (int c = 0; c < dk; c++) {
                queryGradient[queryAt + c] += g * key[keyAt + c];
                keyGradient[keyAt + c] += g * query[queryAt + c];
              }
            }
          }
        }
      }
    }
  }

  /**
   * Computes {@code out_i[h] = Σ_j f_ij[h] · v_j[h]} for given per-entry factors {@code f}: the
   * aggregation with dropped-out weights ({@code f = mask ⊙ α}) that the kernel cannot do, since it
   * aggregates with α itself. Scores and softmax still come from the kernel.
   *
   * @param pattern input: allowed pairs, n nodes
   * @param shape input: heads and value width (keyDim unused)
   * @param factors input, not modified: {@code E * heads}, entry-major
   * @param value input, not modified: {@code n * valueWidth}
   * @param out output, overwritten: {@code n * valueWidth}
   * @throws IllegalArgumentException if a length does not fit
   */
  public static void aggregate(
      AttentionPattern pattern, HeadShape shape, double[] factors, double[] value, double[] out) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(shape, "shape");
    int n = pattern.nodeCount();
    long valueLength = (long) n * shape.valueWidth();
    checkLength("factors", factors, pattern.entryCount() * shape.heads());
    checkLength("value", value, valueLength);
    checkLength("out", out, valueLength);
    PatternRows rows = new PatternRows(pattern);
    int heads = shape.heads();
    int dv = shape.valueDim();
    java.util.Arrays.fill(out, 0.0);
    for (int i = 0; i < n; i++) {
      int end = rows.end(i);
      for (int e = rows.start(i); e < end; e++) {
        int j = rows.source(i, e);
        for (int h = 0; h < heads; h++) {
          double f = factors[e * heads + h];
          if (f == 0) {
            continue;
          }
          int outAt = (i * heads + h) * dv;
          int valueAt = (j * heads + h) * dv;
          for (int c = 0; c < dv; c++) {
            out[outAt + c] += f * value[valueAt + c];
          }
        }
      }
    }
  }

  private static void checkLength(String name, double[] array, long expected) {
    Objects.requireNonNull(array, name);
    if (array.length != expected) {
      throw new IllegalArgumentException(
          name + " must have length " + expected + ", got " + array.length);
    }
  }
}
