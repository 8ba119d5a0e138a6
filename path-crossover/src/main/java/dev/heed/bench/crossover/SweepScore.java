package dev.heed.bench.crossover;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;

/**
 * The score functions the sweep times.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum SweepScore {
  /**
   * GAT additive scores (Veličković et al. 2018, eq. 1), slope 0.2: one precomputed term per node
   * and head, so the key width is 1.
   */
  ADDITIVE("additive"),
  /** Scaled dot-product scores (Vaswani et al. 2017, eq. 1). */
  DOT_PRODUCT("dot-product");

  private final String label;

  SweepScore(String label) {
    this.label = label;
  }

  /**
   * Returns the short label used in the table and the CSV.
   *
   * @return {@code "additive"} or {@code "dot-product"}
   */
  public String label() {
    return label;
  }

  /**
   * Returns the score function.
   *
   * @return the function
   */
  public ScoreFunction function() {
    return this == ADDITIVE
        ? ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE)
        : ScoreFunction.scaledDotProduct();
  }

  /**
   * Returns the head shape this score runs with: the key width is 1 for additive scores, {@code
   * keyDim} for dot-product scores.
   *
   * @param heads heads H
   * @param keyDim query/key width per head for dot-product scores
   * @param valueDim value width per head
   * @return the shape
   */
  public HeadShape shape(int heads, int keyDim, int valueDim) {
    return new HeadShape(heads, this == ADDITIVE ? 1 : keyDim, valueDim);
  }

  /**
   * Parses a label.
   *
   * @param label {@code additive} or {@code dot-product}
   * @return the score
   * @throws IllegalArgumentException if the label is unknown
   */
  public static SweepScore fromLabel(String label) {
    for (SweepScore s : values()) {
      if (s.label.equals(label)) {
        return s;
      }
    }
    throw new IllegalArgumentException(
        "unknown score '" + label + "'; expected additive or dot-product");
  }
}
