package dev.heed.attention;

import java.util.Arrays;

/**
 * How a kernel scores an allowed pair (target i, source j) for head h, from the query-side term
 * {@code q_i} and the key-side term {@code k_j} of that head. Every score function runs on both
 * paths.
 *
 * <ul>
 *   <li>{@link Additive} (GAT, Veličković et al. 2018, eq. 1): {@code e_ij = LeakyReLU(q_i + k_j)}
 *       where the caller has precomputed the target term {@code q_i = a_targetᵀ W h_i} and the
 *       source term {@code k_j = a_sourceᵀ W h_j} (key width 1; {@code a = [a_target ‖ a_source]}),
 *       so no n×n×d work is ever formed.
 *   <li>{@link Gatv2} (Brody et al. 2022): {@code e_ij = aᵀ LeakyReLU(q_i + k_j)} with {@code q_i =
 *       W_target h_i}, {@code k_j = W_source h_j} (key width d) and the attention vector {@code a}
 *       per head.
 *   <li>{@link ScaledDotProduct} (Vaswani et al. 2017, eq. 1): {@code e_ij = q_i · k_j / √d}.
 * </ul>
 *
 * <p>Thread safety: all implementations are immutable.
 */
public sealed interface ScoreFunction
    permits ScoreFunction.Additive, ScoreFunction.Gatv2, ScoreFunction.ScaledDotProduct {

  /** The LeakyReLU negative slope used by the GAT paper (Veličković et al. 2018, §2.1): 0.2. */
  float GAT_NEGATIVE_SLOPE = 0.2f;

  /**
   * Returns the GAT additive score with the given LeakyReLU slope.
   *
   * @param negativeSlope slope for negative inputs, finite and in {@code [0, 1)}
   * @return the score function
   */
  static Additive additive(float negativeSlope) {
    return new Additive(negativeSlope);
  }

  /**
   * Returns the GATv2 score with the given slope and per-head attention vectors.
   *
   * @param negativeSlope slope for negative inputs, finite and in {@code [0, 1)}
   * @param attention input, not modified, length {@code heads * keyDim}: head h's vector at {@code
   *     h * keyDim}
   * @return the score function, holding a copy of {@code attention}
   */
  static Gatv2 gatv2(float negativeSlope, float[] attention) {
    return new Gatv2(negativeSlope, attention);
  }

  /**
   * Returns the scaled dot-product score, scale {@code 1/√keyDim}.
   *
   * @return the score function
   */
  static ScaledDotProduct scaledDotProduct() {
    return ScaledDotProduct.INSTANCE;
  }

  /**
   * Checks that this score function can run with the given head shape.
   *
   * @param shape the call's head shape
   * @throws IllegalArgumentException if they do not fit, saying what was expected
   */
  void checkCompatible(HeadShape shape);

  /** Additive (GAT v1) scores; see {@link ScoreFunction}. Immutable. */
  final class Additive implements ScoreFunction {
    private final float negativeSlope;

    private Additive(float negativeSlope) {
      this.negativeSlope = checkSlope(negativeSlope);
    }

    /**
     * Returns the LeakyReLU negative slope.
     *
     * @return the slope
     */
    public float negativeSlope() {
      return negativeSlope;
    }

    @Override
    public void checkCompatible(HeadShape shape) {
      if (shape.keyDim() != 1) {
        throw new IllegalArgumentException(
            "additive (GAT) scores take one precomputed term per node and head (keyDim = 1), got"
                + " keyDim = "
                + shape.keyDim()
                + "; pass a_target·Wh_i and a_source·Wh_j, not the projected features");
      }
    }

    @Override
    public boolean equals(Object o) {
      return o instanceof Additive a && Float.compare(a.negativeSlope, negativeSlope) == 0;
    }

    @Override
    public int hashCode() {
      return Float.hashCode(negativeSlope);
    }

    @Override
    public String toString() {
      return "additive(slope=" + negativeSlope + ")";
    }
  }

  /** GATv2 scores; see {@link ScoreFunction}. Immutable: holds a private copy of its vector. */
  final class Gatv2 implements ScoreFunction {
    private final float negativeSlope;
    private final float[] attention;

    private Gatv2(float negativeSlope, float[] attention) {
      this.negativeSlope = checkSlope(negativeSlope);
      if (attention == null || attention.length == 0) {
        throw new IllegalArgumentException(
            "GATv2 needs a non-empty attention vector of length heads * keyDim");
      }
      this.attention = attention.clone();
      for (int i = 0; i < this.attention.length; i++) {
        if (!Float.isFinite(this.attention[i])) {
          throw new IllegalArgumentException(
              "GATv2 attention vector must be finite, got " + this.attention[i] + " at index " + i);
        }
      }
    }

    /**
     * Returns the LeakyReLU negative slope.
     *
     * @return the slope
     */
    public float negativeSlope() {
      return negativeSlope;
    }

    /**
     * Returns a copy of the attention vectors, head h's at {@code h * keyDim}.
     *
     * @return a new array
     */
    public float[] attention() {
      return attention.clone();
    }

    /**
     * Reads one element of the attention vectors without copying.
     *
     * @param index in {@code 0..heads*keyDim-1}
     * @return the element
     */
    public float attention(int index) {
      return attention[index];
    }

    /**
     * Returns the length of the attention vectors, {@code heads * keyDim}.
     *
     * @return the length
     */
    public int attentionLength() {
      return attention.length;
    }

    @Override
    public void checkCompatible(HeadShape shape) {
      if (attention.length != shape.keyWidth()) {
        throw new IllegalArgumentException(
            "GATv2 attention vector has length "
                + attention.length
                + " but heads * keyDim = "
                + shape.heads()
                + " * "
                + shape.keyDim()
                + " = "
                + shape.keyWidth());
      }
    }

    @Override
    public boolean equals(Object o) {
      return o instanceof Gatv2 g
          && Float.compare(g.negativeSlope, negativeSlope) == 0
          && Arrays.equals(g.attention, attention);
    }

    @Override
    public int hashCode() {
      return 31 * Float.hashCode(negativeSlope) + Arrays.hashCode(attention);
    }

    @Override
    public String toString() {
      return "gatv2(slope=" + negativeSlope + ", attention length=" + attention.length + ")";
    }
  }

  /** Scaled dot-product scores, scale 1/√keyDim; see {@link ScoreFunction}. Immutable. */
  final class ScaledDotProduct implements ScoreFunction {
    static final ScaledDotProduct INSTANCE = new ScaledDotProduct();

    private ScaledDotProduct() {}

    /**
     * Returns the factor applied to q·k, {@code 1/√keyDim} (Vaswani et al. 2017, eq. 1).
     *
     * @param keyDim the key width
     * @return the scale
     */
    public float scale(int keyDim) {
      return (float) (1.0 / Math.sqrt(keyDim));
    }

    @Override
    public void checkCompatible(HeadShape shape) {
      // any key width works
    }

    @Override
    public String toString() {
      return "scaled-dot-product";
    }
  }

  private static float checkSlope(float negativeSlope) {
    if (!(negativeSlope >= 0f && negativeSlope < 1f)) {
      throw new IllegalArgumentException(
          "LeakyReLU negative slope must be in [0, 1), got "
              + negativeSlope
              + "; the GAT paper uses "
              + GAT_NEGATIVE_SLOPE);
    }
    return negativeSlope;
  }
}
