package dev.heed.sparse.simd;

import dev.heed.sparse.internal.FastExp;
import dev.heed.sparse.internal.RowMath;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.IntVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link RowMath} on the Vector API with {@link FloatVector#SPECIES_PREFERRED}. Spans shorter than
 * the preferred width (for example 8-float heads on a 512-bit machine) step down to 256- and
 * 128-bit vectors, then finish in scalar code. Internal to {@code attention-sparse}, not API.
 *
 * <p>Results depend only on the span contents and length: horizontal sums go through the {@code
 * work} array and are added in lane order (never {@code reduceLanes(ADD)}, whose order is
 * unspecified), and the exponential is {@link FastExp}'s polynomial done lane by lane with the same
 * operations as the scalar form, so scalar tails and vector lanes agree bit for bit.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorRowMath implements RowMath {

  private static final VectorSpecies<Float> WIDE = FloatVector.SPECIES_PREFERRED;
  private static final VectorSpecies<Float> HALF = FloatVector.SPECIES_256;
  private static final VectorSpecies<Float> QUARTER = FloatVector.SPECIES_128;
  private static final int WIDE_LANES = WIDE.length();
  private static final int HALF_LANES = 8;
  private static final int QUARTER_LANES = 4;
  private static final boolean USE_HALF = WIDE_LANES > HALF_LANES;
  private static final boolean USE_QUARTER = WIDE_LANES > QUARTER_LANES;

  private VectorRowMath() {}

  /**
   * Creates the vector implementation, or explains why it cannot run here.
   *
   * @return the implementation
   * @throws UnsupportedOperationException if the preferred vector is narrower than 128 bits (no
   *     useful SIMD), with the width in the message
   */
  public static RowMath create() {
    if (WIDE.vectorBitSize() < 128) {
      throw new UnsupportedOperationException(
          "the preferred float vector is only "
              + WIDE.vectorBitSize()
              + " bits wide; the scalar loops are as fast");
    }
    return new VectorRowMath();
  }

  @Override
  public String describe() {
    return "vector(" + WIDE.vectorBitSize() + "-bit, " + WIDE_LANES + " float lanes)";
  }

  @Override
  public int workLength() {
    return WIDE_LANES;
  }

  private static float sumLanes(FloatVector v, int lanes, float[] work) {
    v.intoArray(work, 0);
    float s = work[0];
    for (int i = 1; i < lanes; i++) {
      s += work[i];
    }
    return s;
  }

  @Override
  public float dot(float[] a, int ao, float[] b, int bo, int length, float[] work) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        acc =
            FloatVector.fromArray(WIDE, a, ao + k).fma(FloatVector.fromArray(WIDE, b, bo + k), acc);
      }
      s = sumLanes(acc, WIDE_LANES, work);
    }
    if (USE_HALF && k <= length - HALF_LANES) {
      FloatVector p =
          FloatVector.fromArray(HALF, a, ao + k).mul(FloatVector.fromArray(HALF, b, bo + k));
      s += sumLanes(p, HALF_LANES, work);
      k += HALF_LANES;
    }
    if (USE_QUARTER && k <= length - QUARTER_LANES) {
      FloatVector p =
          FloatVector.fromArray(QUARTER, a, ao + k).mul(FloatVector.fromArray(QUARTER, b, bo + k));
      s += sumLanes(p, QUARTER_LANES, work);
      k += QUARTER_LANES;
    }
    for (; k < length; k++) {
      s = Math.fma(a[ao + k], b[bo + k], s);
    }
    return s;
  }

  @Override
  public float gatv2(
      float[] att,
      int ao,
      float[] q,
      int qo,
      float[] key,
      int ko,
      int length,
      float negativeSlope,
      float[] work) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector z =
            FloatVector.fromArray(WIDE, q, qo + k).add(FloatVector.fromArray(WIDE, key, ko + k));
        acc = FloatVector.fromArray(WIDE, att, ao + k).fma(z.max(z.mul(negativeSlope)), acc);
      }
      s = sumLanes(acc, WIDE_LANES, work);
    }
    if (USE_HALF && k <= length - HALF_LANES) {
      FloatVector z =
          FloatVector.fromArray(HALF, q, qo + k).add(FloatVector.fromArray(HALF, key, ko + k));
      FloatVector p = FloatVector.fromArray(HALF, att, ao + k).mul(z.max(z.mul(negativeSlope)));
      s += sumLanes(p, HALF_LANES, work);
      k += HALF_LANES;
    }
    if (USE_QUARTER && k <= length - QUARTER_LANES) {
      FloatVector z =
          FloatVector.fromArray(QUARTER, q, qo + k)
              .add(FloatVector.fromArray(QUARTER, key, ko + k));
      FloatVector p = FloatVector.fromArray(QUARTER, att, ao + k).mul(z.max(z.mul(negativeSlope)));
      s += sumLanes(p, QUARTER_LANES, work);
      k += QUARTER_LANES;
    }
    for (; k < length; k++) {
      float z = q[qo + k] + key[ko + k];
      s = Math.fma(att[ao + k], Math.max(z, z * negativeSlope), s);
    }
    return s;
  }

  @Override
  public float max(float[] s, int offset, int length) {
    float m = Float.NEGATIVE_INFINITY;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.fromArray(WIDE, s, offset);
      for (k = WIDE_LANES; k <= length - WIDE_LANES; k += WIDE_LANES) {
        acc = acc.max(FloatVector.fromArray(WIDE, s, offset + k));
      }
      // max is exact and order-free on finite values, so the lane order does not matter here
      m = acc.reduceLanes(VectorOperators.MAX);
    }
    for (; k < length; k++) {
      m = Math.max(m, s[offset + k]);
    }
    return m;
  }

  @Override
  public float expShiftSum(float[] s, int offset, int length, float shift, float[] work) {
    float sum = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector p = exp(FloatVector.fromArray(WIDE, s, offset + k).sub(shift));
        p.intoArray(s, offset + k);
        acc = acc.add(p);
      }
      sum = sumLanes(acc, WIDE_LANES, work);
    }
    for (; k < length; k++) {
      float p = FastExp.expNonPositive(s[offset + k] - shift);
      s[offset + k] = p;
      sum += p;
    }
    return sum;
  }

  /** {@link FastExp#expNonPositive} lane by lane, with the same operations in the same order. */
  private static FloatVector exp(FloatVector x) {
    FloatVector xc = x.max(FastExp.LOWEST_ARGUMENT);
    FloatVector shifted = xc.mul(FastExp.LOG2E).add(FastExp.ROUNDING_MAGIC);
    FloatVector n = shifted.sub(FastExp.ROUNDING_MAGIC);
    FloatVector r = n.fma(FloatVector.broadcast(WIDE, -FastExp.LN2_HI), xc);
    r = n.fma(FloatVector.broadcast(WIDE, -FastExp.LN2_LO), r);
    FloatVector p =
        FloatVector.broadcast(WIDE, FastExp.P0).fma(r, FloatVector.broadcast(WIDE, FastExp.P1));
    p = p.fma(r, FloatVector.broadcast(WIDE, FastExp.P2));
    p = p.fma(r, FloatVector.broadcast(WIDE, FastExp.P3));
    p = p.fma(r, FloatVector.broadcast(WIDE, FastExp.P4));
    p = p.fma(r, FloatVector.broadcast(WIDE, FastExp.P5));
    p = p.fma(r.mul(r), r).add(1f);
    IntVector bits = (IntVector) shifted.reinterpretAsInts();
    FloatVector scale =
        bits.add(FastExp.EXPONENT_BIAS_FROM_MAGIC)
            .lanewise(VectorOperators.LSHL, 23)
            .reinterpretAsFloats();
    return p.mul(scale).blend(0f, x.lt(FastExp.LOWEST_ARGUMENT));
  }

  @Override
  public void axpy(float alpha, float[] x, int xo, float[] y, int yo, int length) {
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector a = FloatVector.broadcast(WIDE, alpha);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector.fromArray(WIDE, x, xo + k)
            .fma(a, FloatVector.fromArray(WIDE, y, yo + k))
            .intoArray(y, yo + k);
      }
    }
    if (USE_HALF && k <= length - HALF_LANES) {
      FloatVector.fromArray(HALF, x, xo + k)
          .fma(FloatVector.broadcast(HALF, alpha), FloatVector.fromArray(HALF, y, yo + k))
          .intoArray(y, yo + k);
      k += HALF_LANES;
    }
    if (USE_QUARTER && k <= length - QUARTER_LANES) {
      FloatVector.fromArray(QUARTER, x, xo + k)
          .fma(FloatVector.broadcast(QUARTER, alpha), FloatVector.fromArray(QUARTER, y, yo + k))
          .intoArray(y, yo + k);
      k += QUARTER_LANES;
    }
    for (; k < length; k++) {
      y[yo + k] = Math.fma(alpha, x[xo + k], y[yo + k]);
    }
  }

  @Override
  public void scale(float[] y, int offset, int length, float factor) {
    int k = 0;
    for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
      FloatVector.fromArray(WIDE, y, offset + k).mul(factor).intoArray(y, offset + k);
    }
    for (; k < length; k++) {
      y[offset + k] *= factor;
    }
  }
}
