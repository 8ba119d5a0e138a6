package dev.heed.attention.internal;

/**
 * A float32 exponential for non-positive arguments, built only from IEEE-754 add, multiply, fused
 * multiply-add and exact bit manipulation, so that a scalar loop and a Vector API loop written from
 * the same steps give the same bits, interpreted or compiled. Internal to Heed (used by the sparse
 * kernel and the dense kernel's vector softmax), not API.
 *
 * <p>Method (common practice for float32 exp; the coefficients are the classic Cephes {@code expf}
 * minimax polynomial, from memory, checked here against {@link Math#exp} by the tests): write
 * {@code x = n·ln2 + r} with {@code n = round(x·log2 e)} and {@code |r| <= ln2/2} ({@code ln2}
 * split in two parts so {@code r} is exact), approximate {@code e^r} by {@code 1 + r + r²·P(r)}
 * with P of degree 5, and multiply by {@code 2^n} built from its exponent bits. Relative error
 * about 2 ulp. Rounding to an integer uses the magic-constant trick: adding and subtracting {@code
 * 1.5·2^23} rounds to nearest under IEEE arithmetic.
 *
 * <p>Thread safety: stateless.
 */
public final class FastExp {

  /** Arguments below this give exactly 0 (the true value is under 1.7e-38). */
  public static final float LOWEST_ARGUMENT = -87f;

  /** log2(e). */
  public static final float LOG2E = 1.44269504088896341f;

  /** High part of ln 2, exact in few bits so that {@code n · LN2_HI} is exact. */
  public static final float LN2_HI = 0.693359375f;

  /** Low part of ln 2: {@code LN2_HI + LN2_LO ≈ ln 2}. */
  public static final float LN2_LO = -2.12194440e-4f;

  /** 1.5·2^23: adding and subtracting it rounds a float of magnitude below 2^22 to an integer. */
  public static final float ROUNDING_MAGIC = 12582912f;

  /** The exponent bias of float32 minus the bits of {@link #ROUNDING_MAGIC}'s low mantissa base. */
  public static final int EXPONENT_BIAS_FROM_MAGIC = 127 - Float.floatToRawIntBits(ROUNDING_MAGIC);

  /** Polynomial coefficient of r^5 in P. */
  public static final float P0 = 1.9875691500e-4f;

  /** Polynomial coefficient of r^4 in P. */
  public static final float P1 = 1.3981999507e-3f;

  /** Polynomial coefficient of r^3 in P. */
  public static final float P2 = 8.3334519073e-3f;

  /** Polynomial coefficient of r^2 in P. */
  public static final float P3 = 4.1665795894e-2f;

  /** Polynomial coefficient of r in P. */
  public static final float P4 = 1.6666665459e-1f;

  /** Constant coefficient of P. */
  public static final float P5 = 5.0000001201e-1f;

  private FastExp() {}

  /**
   * Returns {@code e^x} for {@code x <= 0}, to about 2 ulp; 0 below {@link #LOWEST_ARGUMENT}, and
   * exactly 1 at {@code x = 0}.
   *
   * @param x a non-positive argument; {@code -Infinity} gives 0
   * @return the exponential
   */
  public static float expNonPositive(float x) {
    assert !(x > 0f) : "argument must be <= 0, got " + x;
    if (!(x >= LOWEST_ARGUMENT)) {
      return 0f;
    }
    float shifted = x * LOG2E + ROUNDING_MAGIC;
    float n = shifted - ROUNDING_MAGIC;
    float r = Math.fma(n, -LN2_HI, x);
    r = Math.fma(n, -LN2_LO, r);
    float p = P0;
    p = Math.fma(p, r, P1);
    p = Math.fma(p, r, P2);
    p = Math.fma(p, r, P3);
    p = Math.fma(p, r, P4);
    p = Math.fma(p, r, P5);
    p = Math.fma(p, r * r, r) + 1f;
    int scaleBits = (Float.floatToRawIntBits(shifted) + EXPONENT_BIAS_FROM_MAGIC) << 23;
    return p * Float.intBitsToFloat(scaleBits);
  }
}
