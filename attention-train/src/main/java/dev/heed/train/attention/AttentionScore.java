package dev.heed.train.attention;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.Arrays;
import java.util.Objects;

/**
 * The score function of one attention call during training, with its trainable GATv2 vector held in
 * float64. It converts to the serving {@link ScoreFunction} (float32) for the forward pass through
 * an {@link dev.heed.attention.AttentionKernel}, and gives the backward pass the float64 values it
 * differentiates.
 *
 * <ul>
 *   <li>{@link Kind#ADDITIVE}: GAT, {@code e_ij = LeakyReLU(q_i + k_j)}, key width 1 (Veličković et
 *       al. 2018, eq. 1).
 *   <li>{@link Kind#GATV2}: {@code e_ij = aᵀ LeakyReLU(q_i + k_j)} (Brody et al. 2022).
 *   <li>{@link Kind#SCALED_DOT_PRODUCT}: {@code e_ij = q_i · k_j / √keyDim} (Vaswani et al. 2017,
 *       eq. 1).
 * </ul>
 *
 * <p>Thread safety: immutable; holds a private copy of the GATv2 vector.
 */
public final class AttentionScore {

  /** Which score function. */
  public enum Kind {
    /** GAT (v1) additive score. */
    ADDITIVE,
    /** GATv2 score with a per-head attention vector. */
    GATV2,
    /** Scaled dot-product score. */
    SCALED_DOT_PRODUCT
  }

  private final Kind kind;
  private final double negativeSlope;
  private final double[] attention;

  private AttentionScore(Kind kind, double negativeSlope, double[] attention) {
    this.kind = kind;
    this.negativeSlope = negativeSlope;
    this.attention = attention;
  }

  /**
   * Returns the GAT additive score.
   *
   * @param negativeSlope LeakyReLU slope for negative inputs, in {@code [0, 1)}
   * @return the score
   * @throws IllegalArgumentException if the slope is out of range
   */
  public static AttentionScore additive(double negativeSlope) {
    return new AttentionScore(Kind.ADDITIVE, checkSlope(negativeSlope), null);
  }

  /**
   * Returns the GATv2 score.
   *
   * @param negativeSlope LeakyReLU slope for negative inputs, in {@code [0, 1)}
   * @param attention input, not modified: {@code heads * keyDim} finite values, head h's vector at
   *     {@code h * keyDim}
   * @return the score, holding a copy of {@code attention}
   * @throws IllegalArgumentException if the slope is out of range or the vector is empty or not
   *     finite
   */
  public static AttentionScore gatv2(double negativeSlope, double[] attention) {
    Objects.requireNonNull(attention, "attention");
    if (attention.length == 0) {
      throw new IllegalArgumentException("GATv2 attention vector must not be empty");
    }
    for (int i = 0; i < attention.length; i++) {
      if (!Double.isFinite(attention[i])) {
        throw new IllegalArgumentException(
            "GATv2 attention vector must be finite, got " + attention[i] + " at index " + i);
      }
    }
    return new AttentionScore(Kind.GATV2, checkSlope(negativeSlope), attention.clone());
  }

  /**
   * Returns the scaled dot-product score.
   *
   * @return the score
   */
  public static AttentionScore scaledDotProduct() {
    return new AttentionScore(Kind.SCALED_DOT_PRODUCT, 0.0, null);
  }

  /**
   * Returns the kind.
   *
   * @return the kind
   */
  public Kind kind() {
    return kind;
  }

  /**
   * Returns the LeakyReLU negative slope (0 for scaled dot-product).
   *
   * @return the slope
   */
  public double negativeSlope() {
    return negativeSlope;
  }

  /**
   * Reads one element of the GATv2 vector.
   *
   * @param index in {@code 0..heads*keyDim-1}
   * @return the element
   * @throws IllegalStateException if this is not a GATv2 score
   */
  public double attention(int index) {
    if (attention == null) {
      throw new IllegalStateException(kind + " scores have no attention vector");
    }
    return attention[index];
  }

  /**
   * Returns the length of the GATv2 vector, or 0 for the other kinds.
   *
   * @return the length
   */
  public int attentionLength() {
    return attention == null ? 0 : attention.length;
  }

  /**
   * Checks that this score fits a head shape.
   *
   * @param shape the call's shape
   * @throws IllegalArgumentException if it does not fit, saying what was expected
   */
  public void checkCompatible(HeadShape shape) {
    toKernelScore().checkCompatible(shape);
  }

  /**
   * Returns the serving score function, rounding the GATv2 vector to float32. Cost O(heads·keyDim).
   *
   * @return the kernel's score function
   */
  public ScoreFunction toKernelScore() {
    switch (kind) {
      case ADDITIVE:
        return ScoreFunction.additive((float) negativeSlope);
      case GATV2:
        float[] a = new float[attention.length];
        for (int i = 0; i < a.length; i++) {
          a[i] = (float) attention[i];
        }
        return ScoreFunction.gatv2((float) negativeSlope, a);
      default:
        return ScoreFunction.scaledDotProduct();
    }
  }

  private static double checkSlope(double slope) {
    if (!(slope >= 0 && slope < 1)) {
      throw new IllegalArgumentException(
          "LeakyReLU negative slope must be in [0, 1), got "
              + slope
              + "; the GAT paper uses "
              + ScoreFunction.GAT_NEGATIVE_SLOPE);
    }
    return slope;
  }

  @Override
  public String toString() {
    return kind
        + (kind == Kind.SCALED_DOT_PRODUCT ? "" : "(slope=" + negativeSlope + ")")
        + (attention == null ? "" : "[attention length " + attention.length + "]");
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof AttentionScore s
        && s.kind == kind
        && Double.compare(s.negativeSlope, negativeSlope) == 0
        && Arrays.equals(s.attention, attention);
  }

  @Override
  public int hashCode() {
    return (31 * kind.hashCode() + Double.hashCode(negativeSlope)) * 31
        + Arrays.hashCode(attention);
  }
}
