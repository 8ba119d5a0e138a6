package dev.heed.sparse.internal;

/**
 * bfloat16 (the top 16 bits of a float32: sign, 8 exponent bits, 7 stored significand bits) by bit
 * manipulation, since JDK 17 has no 16-bit float conversions. Rounding is to nearest, ties to even
 * (IEEE 754-2008 §4.3.1); a finite float beyond the largest finite bfloat16 is clamped to it rather
 * than rounded to infinity, so every finite input stays finite. Internal, not API; the error bound
 * is in {@link dev.heed.attention.NodeRowPrecision}.
 *
 * <p>Thread safety: stateless.
 */
public final class Bfloat16 {

  /**
   * The largest float that rounds to a finite bfloat16 ({@code 0x7F7F7FFF}): inputs are clamped to
   * ±this before rounding.
   */
  public static final float LARGEST_ROUNDED_FINITE = Float.intBitsToFloat(0x7F7F7FFF);

  private Bfloat16() {}

  /**
   * Rounds a finite float to bfloat16, ties to even, clamped to the largest finite bfloat16.
   *
   * @param x a finite float
   * @return the bfloat16 bits in the low 16 bits (the high 16 are zero)
   */
  public static int round(float x) {
    float clamped = Math.max(-LARGEST_ROUNDED_FINITE, Math.min(LARGEST_ROUNDED_FINITE, x));
    int bits = Float.floatToRawIntBits(clamped);
    return (bits + 0x7FFF + ((bits >>> 16) & 1)) >>> 16;
  }

  /**
   * Packs two values into one table word: {@code round(low)} in the low 16 bits, {@code
   * round(high)} in the high 16 bits.
   *
   * @param low a finite float
   * @param high a finite float
   * @return the word's bits
   */
  public static int pair(float low, float high) {
    return round(low) | (round(high) << 16);
  }

  /**
   * Returns the float of a word's low bfloat16.
   *
   * @param word the word's bits
   * @return the exact float value of its low 16 bits
   */
  public static float low(int word) {
    return Float.intBitsToFloat(word << 16);
  }

  /**
   * Returns the float of a word's high bfloat16.
   *
   * @param word the word's bits
   * @return the exact float value of its high 16 bits
   */
  public static float high(int word) {
    return Float.intBitsToFloat(word & 0xFFFF0000);
  }
}
