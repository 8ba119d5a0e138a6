package dev.heed.attention.internal;

/**
 * The unnormalised softmax of one row of scores, in place: the dense kernel's element-wise step.
 * Internal to Heed, not API.
 *
 * <p>Thread safety: implementations are stateless and safe from any thread.
 */
public interface RowSoftmax {

  /**
   * Returns a short name for logs, for example {@code "vector(512-bit)"}.
   *
   * @return the implementation name
   */
  String describe();

  /**
   * Replaces each score {@code x} of {@code row[0..length-1]} by {@code exp(x - m)}, where {@code
   * m} is the row maximum, and returns the sum of the new values (common practice: subtracting the
   * maximum keeps every term in [0, 1] and the sum in [1, length], so nothing overflows). The
   * exponential is {@link FastExp}'s polynomial; terms below {@code e^}{@link
   * FastExp#LOWEST_ARGUMENT} become 0, and {@code -Infinity} scores (masked pairs) give exactly 0.
   *
   * @param row input and output: scores in, unnormalised weights out; at least one score must be
   *     finite for the result to be meaningful
   * @param length number of scores, at least 1
   * @return the sum of the unnormalised weights, at least 1 for finite scores; if a score was NaN
   *     or {@code +Infinity}, a value that is not a positive finite number (NaN or 0), which the
   *     caller reports as an overflow
   */
  float exponentiateShifted(float[] row, int length);
}
