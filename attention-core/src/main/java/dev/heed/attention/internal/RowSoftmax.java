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
   * As {@link #exponentiateShifted(float[], int)} over the allowed pairs of the row only: pair
   * {@code x} is allowed when bit {@code x & 7} of {@code allowed[allowedOffset + x / 8]} is set
   * ({@link #isAllowed}); the maximum is taken over allowed pairs and the others get exactly 0. A
   * bit per pair keeps a block of rows' masks in the first-level cache (a float per pair did not,
   * and reading it cost about a fifth of a masked call), and applying it here, while the row is in
   * registers, saves a separate pass over the score block.
   *
   * @param row input and output: scores in, unnormalised weights out
   * @param allowed the row's pairs, one bit each, least significant bit first; not modified
   * @param allowedOffset index in {@code allowed} of the byte holding pair 0
   * @param length number of scores, at least 1; at least one pair must be allowed
   * @return the sum of the unnormalised weights, as {@link #exponentiateShifted(float[], int)}
   */
  float exponentiateShifted(float[] row, byte[] allowed, int allowedOffset, int length);

  /**
   * Returns whether pair {@code x} of a row is allowed in the bit layout of {@link
   * #exponentiateShifted(float[], byte[], int, int)}.
   *
   * @param allowed the row's pairs, one bit each
   * @param allowedOffset index of the byte holding pair 0
   * @param x the pair, at least 0
   * @return true if its bit is set
   */
  static boolean isAllowed(byte[] allowed, int allowedOffset, int x) {
    return ((allowed[allowedOffset + (x >>> 3)] >>> (x & 7)) & 1) != 0;
  }

  /**
   * Fills {@code row[0..length-1]} with the unnormalised softmax of one target's additive (GAT)
   * scores {@code LeakyReLU(query + keys[x])} over its allowed pairs (Veličković et al. 2018, eq. 1
   * split into a target and a source term; LeakyReLU as {@code max(z, slope·z)}, equal to the usual
   * form for slopes in [0, 1)), shifted by their maximum as {@link #exponentiateShifted(float[],
   * int)} does, and returns their sum. {@code query + keys[x]} is rounded once, as in the float64
   * equation.
   *
   * @param query the target's score term
   * @param keys the sources' score terms, one per source; not modified
   * @param negativeSlope the LeakyReLU slope, in [0, 1)
   * @param allowed the row's pairs, one bit each as in {@link #exponentiateShifted(float[], byte[],
   *     int, int)}, or null for the complete pattern; not modified
   * @param allowedOffset index in {@code allowed} of the byte holding pair 0 (ignored without it)
   * @param row output: the unnormalised weights
   * @param length number of sources, at least 1
   * @return the sum of the unnormalised weights, as {@link #exponentiateShifted(float[], int)}
   */
  float exponentiateAdditive(
      float query,
      float[] keys,
      float negativeSlope,
      byte[] allowed,
      int allowedOffset,
      float[] row,
      int length);
}
