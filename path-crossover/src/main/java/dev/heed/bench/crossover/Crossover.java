package dev.heed.bench.crossover;

/**
 * Where the sparse path overtakes the dense one for one score and node count.
 *
 * <p>Thread safety: immutable.
 *
 * @param score the score function
 * @param n node count
 * @param kind what was found
 * @param density the crossover density (a fraction) for {@link Kind#FOUND}; for {@link
 *     Kind#SPARSE_FASTER_EVERYWHERE} the highest density compared, for {@link
 *     Kind#DENSE_FASTER_EVERYWHERE} the lowest; NaN for {@link Kind#NOT_MEASURABLE}
 * @param remark extra words (for example that the time ratio was not monotone); empty if none
 */
public record Crossover(SweepScore score, int n, Kind kind, double density, String remark) {

  /** What the comparison of the two paths found. */
  public enum Kind {
    /** Sparse is faster up to {@code density}, dense faster at every measured density above it. */
    FOUND,
    /** Sparse was faster at every density where both were measured: crossover above the range. */
    SPARSE_FASTER_EVERYWHERE,
    /** Dense was faster at every density where both were measured: none in range. */
    DENSE_FASTER_EVERYWHERE,
    /** No density had both paths measured. */
    NOT_MEASURABLE
  }

  /**
   * Returns the result in words, for the table and the chart.
   *
   * @return for example {@code "2.31 %"} or {@code "none in range (dense faster at every measured
   *     density down to 0.1 %)"}
   */
  public String describe() {
    String text =
        switch (kind) {
          case FOUND -> Formats.percent(density);
          case SPARSE_FASTER_EVERYWHERE ->
              "above the range (sparse faster at every measured density up to "
                  + Formats.percent(density)
                  + ")";
          case DENSE_FASTER_EVERYWHERE ->
              "none in range (dense faster at every measured density down to "
                  + Formats.percent(density)
                  + ")";
          case NOT_MEASURABLE -> "not measurable (no density with both paths timed)";
        };
    return remark.isEmpty() ? text : text + "; " + remark;
  }
}
