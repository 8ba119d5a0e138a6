package dev.heed.sparse.simd;

import dev.heed.attention.internal.FastExp;
import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.PerHeadMath;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link PerHeadMath} on the Vector API, in the one species {@link VectorExp#SPECIES} (see {@link
 * VectorRowMath}); span tails shorter than a vector finish in scalar code. Results depend only on
 * the span contents and length: the exponential is {@link FastExp}'s polynomial done lane by lane
 * with the same operations as the scalar form, so scalar tails and vector lanes agree bit for bit,
 * and horizontal sums are a fixed pairwise tree of lane permutations and exact lane-wise adds
 * (lanes i and i xor 4, then xor 2, then xor 1; never {@code reduceLanes(ADD)}, whose order is
 * unspecified).
 *
 * <p>That tree is written out in each method that sums lanes, not shared through a helper: C2
 * always inlines the Vector API's own methods, but stops inlining plain ones once a caller's graph
 * passes its node limit ({@code NodeCountInliningCutoff} under {@code -XX:+PrintInlining}), and a
 * helper cut off there receives its vector as a heap object. A shared helper was cut off that way
 * in the per-head path's compiled row loop, which then took 3 % more CPU time per call (dot
 * products, 8 heads × 8 dims, 1 thread).
 *
 * <p>Thread safety: stateless.
 */
final class VectorPerHeadMath implements PerHeadMath {

  private static final VectorSpecies<Float> WIDE = VectorExp.SPECIES;

  private static final int WIDE_LANES = WIDE.length();

  // Lane permutations i -> i xor 4, 2, 1 for the pairwise horizontal sum (8 or 4 lanes).
  private static final VectorShuffle<Float> XOR4 =
      VectorShuffle.fromOp(WIDE, i -> WIDE_LANES >= 8 ? i ^ 4 : i);
  private static final VectorShuffle<Float> XOR2 = VectorShuffle.fromOp(WIDE, i -> i ^ 2);
  private static final VectorShuffle<Float> XOR1 = VectorShuffle.fromOp(WIDE, i -> i ^ 1);

  VectorPerHeadMath() {}

  @Override
  public float dot(float[] a, int ao, float[] b, int bo, int length) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        acc =
            FloatVector.fromArray(WIDE, a, ao + k).fma(FloatVector.fromArray(WIDE, b, bo + k), acc);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      s = acc.lane(0);
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
      float negativeSlope) {
    float s = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector z =
            FloatVector.fromArray(WIDE, q, qo + k).add(FloatVector.fromArray(WIDE, key, ko + k));
        acc = FloatVector.fromArray(WIDE, att, ao + k).fma(z.max(z.mul(negativeSlope)), acc);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      s = acc.lane(0);
    }
    for (; k < length; k++) {
      float z = q[qo + k] + key[ko + k];
      s = Math.fma(att[ao + k], Math.max(z, z * negativeSlope), s);
    }
    return s;
  }

  @Override
  public void gatherRows(float[] table, int width, int[] rows, int count, float[] out) {
    // vector moves, not System.arraycopy: measured on R-MAT 1M with 8-float key rows, a loop of
    // arraycopy calls made the whole GAT layer about 1.4x slower than these loads and stores
    if (width == WIDE_LANES) {
      for (int t = 0; t < count; t++) {
        FloatVector.fromArray(WIDE, table, rows[t] * WIDE_LANES).intoArray(out, t * WIDE_LANES);
      }
      return;
    }
    int vectorWidth = width - width % WIDE_LANES;
    for (int t = 0; t < count; t++) {
      int from = rows[t] * width;
      int to = t * width;
      int x = 0;
      for (; x < vectorWidth; x += WIDE_LANES) {
        FloatVector.fromArray(WIDE, table, from + x).intoArray(out, to + x);
      }
      for (; x < width; x++) {
        out[to + x] = table[from + x];
      }
    }
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
  public float expShiftSum(float[] s, int offset, int length, float shift) {
    float sum = 0f;
    int k = 0;
    if (length >= WIDE_LANES) {
      FloatVector acc = FloatVector.zero(WIDE);
      for (; k <= length - WIDE_LANES; k += WIDE_LANES) {
        FloatVector p =
            VectorExp.expNonPositive(FloatVector.fromArray(WIDE, s, offset + k).sub(shift));
        p.intoArray(s, offset + k);
        acc = acc.add(p);
      }
      // the horizontal sum, written out (see the class comment)
      if (WIDE_LANES >= 8) {
        acc = acc.add(acc.rearrange(XOR4));
      }
      acc = acc.add(acc.rearrange(XOR2));
      acc = acc.add(acc.rearrange(XOR1));
      sum = acc.lane(0);
    }
    for (; k < length; k++) {
      float p = FastExp.expNonPositive(s[offset + k] - shift);
      s[offset + k] = p;
      sum += p;
    }
    return sum;
  }

  @Override
  public void weightedRowSum(
      float[] w,
      int wOffset,
      int[] rowBase,
      int count,
      int headOffset,
      float[] value,
      float[] acc,
      int accOffset,
      int length) {
    int x = 0;
    for (; x <= length - WIDE_LANES; x += WIDE_LANES) {
      FloatVector a = FloatVector.fromArray(WIDE, acc, accOffset + x);
      for (int t = 0; t < count; t++) {
        a =
            FloatVector.fromArray(WIDE, value, rowBase[t] + headOffset + x)
                .fma(FloatVector.broadcast(WIDE, w[wOffset + t]), a);
      }
      a.intoArray(acc, accOffset + x);
    }
    for (; x < length; x++) {
      float a = acc[accOffset + x];
      for (int t = 0; t < count; t++) {
        a = Math.fma(w[wOffset + t], value[rowBase[t] + headOffset + x], a);
      }
      acc[accOffset + x] = a;
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
