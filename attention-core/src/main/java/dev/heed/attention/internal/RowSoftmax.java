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

  /**
   * As {@link #exponentiateShifted(float[], int)} over the scores {@code row[x] + mask[maskOffset +
   * x]}: the mask holds 0 for allowed and {@code -Infinity} for masked pairs, so the maximum is
   * taken over allowed pairs only and masked pairs get exactly 0. Adding the mask here, while the
   * row is in registers, saves a separate pass over the score block.
   *
   * @param row input and output: scores in, unnormalised weights out
   * @param mask per-pair mask values, 0 or {@code -Infinity}; not modified
   * @param maskOffset index in {@code mask} of the row's first pair
   * @param length number of scores, at least 1; at least one pair must be allowed
   * @return the sum of the unnormalised weights, as {@link #exponentiateShifted(float[], int)}
   */
  float exponentiateShifted(float[] row, float[] mask, int maskOffset, int length);

  /**
   * Fills {@code row[0..length-1]} with the unnormalised softmax of one target's additive (GAT)
   * scores {@code LeakyReLU(query + keys[x]) + mask[maskOffset + x]} (Veličković et al. 2018, eq. 1
   * split into a target and a source term; LeakyReLU as {@code max(z, slope·z)}, equal to the usual
   * form for slopes in [0, 1)), shifted by their maximum as {@link #exponentiateShifted(float[],
   * int)} does, and returns their sum. {@code query + keys[x]} is rounded once, as in the float64
   * equation.
   *
   * @param query the target's score term
   * @param keys the sources' score terms, one per source; not modified
   * @param negativeSlope the LeakyReLU slope, in [0, 1)
   * @param mask per-pair mask values, 0 or {@code -Infinity}, or null for the complete pattern; not
   *     modified
   * @param maskOffset index in {@code mask} of the row's first pair (ignored without a mask)
   * @param row output: the unnormalised weights
   * @param length number of sources, at least 1
   * @return the sum of the unnormalised weights, as {@link #exponentiateShifted(float[], int)}
   */
  float exponentiateAdditive(
      float query,
      float[] keys,
      float negativeSlope,
      float[] mask,
      int maskOffset,
      float[] row,
      int length);
}
