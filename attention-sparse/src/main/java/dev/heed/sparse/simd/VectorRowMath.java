package dev.heed.sparse.simd;

import dev.heed.attention.internal.FastExp;
import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.RowMath;
import java.util.Arrays;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link RowMath} on the Vector API: 256-bit vectors where {@link FloatVector#SPECIES_PREFERRED} is
 * at least that wide (AVX2, AVX-512), else the preferred 128-bit ones; span tails shorter than a
 * vector finish in scalar code. Internal to {@code attention-sparse}, not API.
 *
 * <p>Results depend only on the span contents and length: horizontal sums are a fixed pairwise tree
 * of lane permutations and exact lane-wise adds (never {@code reduceLanes(ADD)}, whose order is
 * unspecified), and the exponential is {@link FastExp}'s polynomial done lane by lane with the same
 * operations as the scalar form, so scalar tails and vector lanes agree bit for bit.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorRowMath implements RowMath {

  /**
   * The species used everywhere, {@link VectorExp#SPECIES}: 256 bits (8 floats, one 8-dim head)
   * where the preferred shape is at least that wide, else the preferred one. Not 512 bits even
   * where the hardware has them: measured on JDK 17 here, a method mixing 512- and 256-bit vectors
   * (needed for 8-float heads) left its 256-bit stores on the slow, non-intrinsic path, and a
   * second species passed to the shared {@link VectorExp} slowed every vector loop in the JVM. One
   * species also keeps each method small enough for C2 to compile whole.
   */
  private static final VectorSpecies<Float> WIDE = VectorExp.SPECIES;

  private static final int WIDE_LANES = WIDE.length();

  // Lane permutations i -> i xor 4, 2, 1 for the pairwise horizontal sum (8 or 4 lanes).
  private static final VectorShuffle<Float> XOR4 =
      VectorShuffle.fromOp(WIDE, i -> WIDE_LANES >= 8 ? i ^ 4 : i);
  private static final VectorShuffle<Float> XOR2 = VectorShuffle.fromOp(WIDE, i -> i ^ 2);
  private static final VectorShuffle<Float> XOR1 = VectorShuffle.fromOp(WIDE, i -> i ^ 1);

  private VectorRowMath() {}

  /**
   * Creates the vector implementation, or explains why it cannot run here.
   *
   * @return the implementation
   * @throws UnsupportedOperationException if the preferred vector is narrower than 128 bits (no
   *     useful SIMD), with the width in the message
   */
  public static RowMath create() {
    if (FloatVector.SPECIES_PREFERRED.vectorBitSize() < 128) {
      throw new UnsupportedOperationException(
          "the preferred float vector is only "
              + FloatVector.SPECIES_PREFERRED.vectorBitSize()
              + " bits wide; the scalar loops are as fast");
    }
    return new VectorRowMath();
  }

  @Override
  public String describe() {
    return "vector("
        + WIDE.vectorBitSize()
        + "-bit of preferred "
        + FloatVector.SPECIES_PREFERRED.vectorBitSize()
        + "-bit)";
  }

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
      // pairwise tree of exact lane-wise adds: the same bits interpreted or compiled
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
      // pairwise tree of exact lane-wise adds: the same bits interpreted or compiled
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
      // pairwise tree of exact lane-wise adds: the same bits interpreted or compiled
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

  @Override
  public boolean servesAllHeads() {
    return WIDE_LANES == ALL_HEADS;
  }

  @Override
  public boolean additiveScoresAllHeads(
      float[] q,
      int qOffset,
      float[] keys,
      int keysOffset,
      int count,
      float negativeSlope,
      float[] s) {
    assert WIDE_LANES == ALL_HEADS;
    FloatVector query = FloatVector.fromArray(WIDE, q, qOffset);
    // e · 0 is 0 for finite e and NaN for infinite or NaN e, so one NaN lane marks a bad score
    FloatVector check = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector z = query.add(FloatVector.fromArray(WIDE, keys, keysOffset + t * ALL_HEADS));
      FloatVector e = z.max(z.mul(negativeSlope));
      e.intoArray(s, t * ALL_HEADS);
      check = check.add(e.mul(0f));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public boolean packAllHeads(
      float[] key, float[] value, int from, int to, float[] table, int tableOffset) {
    assert WIDE_LANES == ALL_HEADS;
    // v - v is 0 for a finite v and NaN for NaN or an infinity: one NaN lane marks a bad input
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      int p = tableOffset + c * PACKED_ROW;
      int v = c * ALL_HEADS * ALL_HEADS;
      FloatVector k = FloatVector.fromArray(WIDE, key, c * ALL_HEADS);
      FloatVector v0 = FloatVector.fromArray(WIDE, value, v);
      FloatVector v1 = FloatVector.fromArray(WIDE, value, v + 8);
      FloatVector v2 = FloatVector.fromArray(WIDE, value, v + 16);
      FloatVector v3 = FloatVector.fromArray(WIDE, value, v + 24);
      FloatVector v4 = FloatVector.fromArray(WIDE, value, v + 32);
      FloatVector v5 = FloatVector.fromArray(WIDE, value, v + 40);
      FloatVector v6 = FloatVector.fromArray(WIDE, value, v + 48);
      FloatVector v7 = FloatVector.fromArray(WIDE, value, v + 56);
      k.intoArray(table, p);
      v0.intoArray(table, p + 8);
      v1.intoArray(table, p + 16);
      v2.intoArray(table, p + 24);
      v3.intoArray(table, p + 32);
      v4.intoArray(table, p + 40);
      v5.intoArray(table, p + 48);
      v6.intoArray(table, p + 56);
      v7.intoArray(table, p + 64);
      // each difference is exactly 0 or NaN, so the sum cannot overflow to a false alarm
      check =
          check
              .add(k.sub(k))
              .add(v0.sub(v0))
              .add(v1.sub(v1))
              .add(v2.sub(v2))
              .add(v3.sub(v3))
              .add(v4.sub(v4))
              .add(v5.sub(v5))
              .add(v6.sub(v6))
              .add(v7.sub(v7));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public boolean additiveScoresAllHeadsPacked(
      float[] q,
      int qOffset,
      float[] table,
      int[] rowBase,
      int count,
      float negativeSlope,
      float[] s) {
    assert WIDE_LANES == ALL_HEADS;
    FloatVector query = FloatVector.fromArray(WIDE, q, qOffset);
    // e · 0 is 0 for finite e and NaN for infinite or NaN e, so one NaN lane marks a bad score
    FloatVector check = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector z = query.add(FloatVector.fromArray(WIDE, table, rowBase[t] - ALL_HEADS));
      FloatVector e = z.max(z.mul(negativeSlope));
      e.intoArray(s, t * ALL_HEADS);
      check = check.add(e.mul(0f));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public void softmaxAccumulateAllHeads(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work) {
    assert WIDE_LANES == ALL_HEADS;
    FloatVector blockMax = FloatVector.fromArray(WIDE, s, 0);
    for (int t = 1; t < count; t++) {
      blockMax = blockMax.max(FloatVector.fromArray(WIDE, s, t * ALL_HEADS));
    }
    FloatVector oldMax = FloatVector.fromArray(WIDE, max, 0);
    FloatVector newMax = oldMax.max(blockMax);
    newMax.intoArray(max, 0);
    // t = -1 rescales by exp(oldMax - newMax), t >= 0 exponentiates the block's scores
    FloatVector l = FloatVector.fromArray(WIDE, sum, 0);
    for (int t = -1; t < count; t++) {
      FloatVector p =
          VectorExp.expNonPositive(
              t < 0
                  ? oldMax.sub(newMax)
                  : FloatVector.fromArray(WIDE, s, t * ALL_HEADS).sub(newMax));
      if (t < 0) {
        l = l.mul(p);
        p.intoArray(work, 0);
      } else {
        p.intoArray(s, t * ALL_HEADS);
        l = l.add(p);
      }
    }
    l.intoArray(sum, 0);
    // with 8 heads of 8 floats, each 256-bit value vector is exactly one head: broadcast its weight
    FloatVector a0 = FloatVector.fromArray(WIDE, acc, 0).mul(work[0]);
    FloatVector a1 = FloatVector.fromArray(WIDE, acc, 8).mul(work[1]);
    FloatVector a2 = FloatVector.fromArray(WIDE, acc, 16).mul(work[2]);
    FloatVector a3 = FloatVector.fromArray(WIDE, acc, 24).mul(work[3]);
    FloatVector a4 = FloatVector.fromArray(WIDE, acc, 32).mul(work[4]);
    FloatVector a5 = FloatVector.fromArray(WIDE, acc, 40).mul(work[5]);
    FloatVector a6 = FloatVector.fromArray(WIDE, acc, 48).mul(work[6]);
    FloatVector a7 = FloatVector.fromArray(WIDE, acc, 56).mul(work[7]);
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      int w = t * ALL_HEADS;
      a0 = FloatVector.fromArray(WIDE, value, r).fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 = FloatVector.fromArray(WIDE, value, r + 8).fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          FloatVector.fromArray(WIDE, value, r + 16).fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          FloatVector.fromArray(WIDE, value, r + 24).fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 =
          FloatVector.fromArray(WIDE, value, r + 32).fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 =
          FloatVector.fromArray(WIDE, value, r + 40).fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 =
          FloatVector.fromArray(WIDE, value, r + 48).fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 =
          FloatVector.fromArray(WIDE, value, r + 56).fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
    }
    a0.intoArray(acc, 0);
    a1.intoArray(acc, 8);
    a2.intoArray(acc, 16);
    a3.intoArray(acc, 24);
    a4.intoArray(acc, 32);
    a5.intoArray(acc, 40);
    a6.intoArray(acc, 48);
    a7.intoArray(acc, 56);
  }

  @Override
  public void softmaxRowAllHeads(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work,
      float[] out,
      int outOffset) {
    assert WIDE_LANES == ALL_HEADS;
    // max(-Infinity, m) is m, and the rescale of a zero accumulator and sum by exp(-Infinity) = 0
    // leaves +0: starting from the block maximum and zeros gives the same bits
    FloatVector rowMax = FloatVector.fromArray(WIDE, s, 0);
    for (int t = 1; t < count; t++) {
      rowMax = rowMax.max(FloatVector.fromArray(WIDE, s, t * ALL_HEADS));
    }
    rowMax.intoArray(max, 0);
    FloatVector l = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector p =
          VectorExp.expNonPositive(FloatVector.fromArray(WIDE, s, t * ALL_HEADS).sub(rowMax));
      p.intoArray(s, t * ALL_HEADS);
      l = l.add(p);
    }
    l.intoArray(sum, 0);
    // softmaxAccumulateAllHeads's weighted-sum loop, repeated so that the accumulators start as
    // zeros in registers: vectors are not passed through helper methods (see DEVELOPERS.md)
    FloatVector a0 = FloatVector.zero(WIDE);
    FloatVector a1 = a0;
    FloatVector a2 = a0;
    FloatVector a3 = a0;
    FloatVector a4 = a0;
    FloatVector a5 = a0;
    FloatVector a6 = a0;
    FloatVector a7 = a0;
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      int w = t * ALL_HEADS;
      a0 = FloatVector.fromArray(WIDE, value, r).fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 = FloatVector.fromArray(WIDE, value, r + 8).fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          FloatVector.fromArray(WIDE, value, r + 16).fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          FloatVector.fromArray(WIDE, value, r + 24).fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 =
          FloatVector.fromArray(WIDE, value, r + 32).fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 =
          FloatVector.fromArray(WIDE, value, r + 40).fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 =
          FloatVector.fromArray(WIDE, value, r + 48).fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 =
          FloatVector.fromArray(WIDE, value, r + 56).fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
    }
    // lane-wise IEEE division: the same bits as the scalar acc[x] / sum[h]
    a0.div(sum[0]).intoArray(out, outOffset);
    a1.div(sum[1]).intoArray(out, outOffset + 8);
    a2.div(sum[2]).intoArray(out, outOffset + 16);
    a3.div(sum[3]).intoArray(out, outOffset + 24);
    a4.div(sum[4]).intoArray(out, outOffset + 32);
    a5.div(sum[5]).intoArray(out, outOffset + 40);
    a6.div(sum[6]).intoArray(out, outOffset + 48);
    a7.div(sum[7]).intoArray(out, outOffset + 56);
  }

  @Override
  public void singleEntryRowAllHeads(float[] value, int rowBase, float[] out, int outOffset) {
    assert WIDE_LANES == ALL_HEADS;
    for (int x = 0; x < ALL_HEADS * ALL_HEADS; x += ALL_HEADS) {
      FloatVector.fromArray(WIDE, value, rowBase + x).add(0f).intoArray(out, outOffset + x);
    }
  }

  @Override
  public boolean keyMaximaAllHeads(float[] key, int from, int to, float[] max) {
    assert WIDE_LANES == ALL_HEADS;
    FloatVector m = FloatVector.fromArray(WIDE, max, 0);
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      FloatVector k = FloatVector.fromArray(WIDE, key, c * ALL_HEADS);
      m = m.max(k);
      check = check.add(k.sub(k));
    }
    m.intoArray(max, 0);
    return check.eq(check).allTrue();
  }

  @Override
  public boolean packFactored(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int tableOffset) {
    assert WIDE_LANES == ALL_HEADS;
    FloatVector top = FloatVector.fromArray(WIDE, keyMax, 0);
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      int p = tableOffset + c * FACTORED_ROW;
      int v = c * ALL_HEADS * ALL_HEADS;
      FloatVector d = FloatVector.fromArray(WIDE, key, c * ALL_HEADS).sub(top);
      VectorExp.expNonPositive(d).intoArray(table, p);
      VectorExp.expNonPositive(d.mul(negativeSlope)).intoArray(table, p + 8);
      FloatVector v0 = FloatVector.fromArray(WIDE, value, v);
      FloatVector v1 = FloatVector.fromArray(WIDE, value, v + 8);
      FloatVector v2 = FloatVector.fromArray(WIDE, value, v + 16);
      FloatVector v3 = FloatVector.fromArray(WIDE, value, v + 24);
      FloatVector v4 = FloatVector.fromArray(WIDE, value, v + 32);
      FloatVector v5 = FloatVector.fromArray(WIDE, value, v + 40);
      FloatVector v6 = FloatVector.fromArray(WIDE, value, v + 48);
      FloatVector v7 = FloatVector.fromArray(WIDE, value, v + 56);
      v0.intoArray(table, p + 16);
      v1.intoArray(table, p + 24);
      v2.intoArray(table, p + 32);
      v3.intoArray(table, p + 40);
      v4.intoArray(table, p + 48);
      v5.intoArray(table, p + 56);
      v6.intoArray(table, p + 64);
      v7.intoArray(table, p + 72);
      check =
          check
              .add(v0.sub(v0))
              .add(v1.sub(v1))
              .add(v2.sub(v2))
              .add(v3.sub(v3))
              .add(v4.sub(v4))
              .add(v5.sub(v5))
              .add(v6.sub(v6))
              .add(v7.sub(v7));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public boolean factoredRowAllHeads(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] out,
      int outOffset) {
    assert WIDE_LANES == ALL_HEADS;
    int lw = count * ALL_HEADS;
    Arrays.fill(s, lw, lw + ALL_HEADS, 0f);
    addFactoredWeights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, s, lw);
    if (!FloatVector.fromArray(WIDE, s, lw)
        .compare(VectorOperators.GE, FACTORED_MIN_SUM)
        .allTrue()) {
      return false;
    }
    FloatVector a0 = FloatVector.zero(WIDE);
    FloatVector a1 = a0;
    FloatVector a2 = a0;
    FloatVector a3 = a0;
    FloatVector a4 = a0;
    FloatVector a5 = a0;
    FloatVector a6 = a0;
    FloatVector a7 = a0;
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      int w = t * ALL_HEADS;
      a0 = FloatVector.fromArray(WIDE, table, r).fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 = FloatVector.fromArray(WIDE, table, r + 8).fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          FloatVector.fromArray(WIDE, table, r + 16).fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          FloatVector.fromArray(WIDE, table, r + 24).fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 =
          FloatVector.fromArray(WIDE, table, r + 32).fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 =
          FloatVector.fromArray(WIDE, table, r + 40).fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 =
          FloatVector.fromArray(WIDE, table, r + 48).fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 =
          FloatVector.fromArray(WIDE, table, r + 56).fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
    }
    a0.div(s[lw]).intoArray(out, outOffset);
    a1.div(s[lw + 1]).intoArray(out, outOffset + 8);
    a2.div(s[lw + 2]).intoArray(out, outOffset + 16);
    a3.div(s[lw + 3]).intoArray(out, outOffset + 24);
    a4.div(s[lw + 4]).intoArray(out, outOffset + 32);
    a5.div(s[lw + 5]).intoArray(out, outOffset + 40);
    a6.div(s[lw + 6]).intoArray(out, outOffset + 48);
    a7.div(s[lw + 7]).intoArray(out, outOffset + 56);
    return true;
  }

  @Override
  public void factoredBlockAllHeads(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] sum,
      float[] acc) {
    assert WIDE_LANES == ALL_HEADS;
    addFactoredWeights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum, 0);
    FloatVector a0 = FloatVector.fromArray(WIDE, acc, 0);
    FloatVector a1 = FloatVector.fromArray(WIDE, acc, 8);
    FloatVector a2 = FloatVector.fromArray(WIDE, acc, 16);
    FloatVector a3 = FloatVector.fromArray(WIDE, acc, 24);
    FloatVector a4 = FloatVector.fromArray(WIDE, acc, 32);
    FloatVector a5 = FloatVector.fromArray(WIDE, acc, 40);
    FloatVector a6 = FloatVector.fromArray(WIDE, acc, 48);
    FloatVector a7 = FloatVector.fromArray(WIDE, acc, 56);
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      int w = t * ALL_HEADS;
      a0 = FloatVector.fromArray(WIDE, table, r).fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 = FloatVector.fromArray(WIDE, table, r + 8).fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          FloatVector.fromArray(WIDE, table, r + 16).fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          FloatVector.fromArray(WIDE, table, r + 24).fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 =
          FloatVector.fromArray(WIDE, table, r + 32).fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 =
          FloatVector.fromArray(WIDE, table, r + 40).fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 =
          FloatVector.fromArray(WIDE, table, r + 48).fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 =
          FloatVector.fromArray(WIDE, table, r + 56).fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
    }
    a0.intoArray(acc, 0);
    a1.intoArray(acc, 8);
    a2.intoArray(acc, 16);
    a3.intoArray(acc, 24);
    a4.intoArray(acc, 32);
    a5.intoArray(acc, 40);
    a6.intoArray(acc, 48);
    a7.intoArray(acc, 56);
  }

  /**
   * The factored weights of a block's entries ({@link RowMath#factoredRowAllHeads}): entry t's into
   * {@code s[t·8 ..]}, and their sums, in order of t, added to {@code sum[sumOffset ..]}. Arrays in
   * and out, so no vector crosses the call.
   */
  private static void addFactoredWeights(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] sum,
      int sumOffset) {
    FloatVector qk =
        FloatVector.fromArray(WIDE, q, qOffset).add(FloatVector.fromArray(WIDE, keyMax, 0));
    // under the row's bound m = LeakyReLU(q + K): entries with q + k >= 0 weigh exp(k - K) = E,
    // the others exp(slope (k - K)) exp(-(1 - slope) max(q + K, 0)) = F B
    FloatVector b = VectorExp.expNonPositive(qk.max(0f).mul(negativeSlope - 1f));
    FloatVector threshold =
        VectorExp.expNonPositive(qk.neg().min(0f)).blend(Float.POSITIVE_INFINITY, qk.lt(0f));
    FloatVector l = FloatVector.fromArray(WIDE, sum, sumOffset);
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      FloatVector e = FloatVector.fromArray(WIDE, table, r - 16);
      FloatVector p =
          FloatVector.fromArray(WIDE, table, r - 8)
              .mul(b)
              .blend(e, e.compare(VectorOperators.GE, threshold));
      p.intoArray(s, t * ALL_HEADS);
      l = l.add(p);
    }
    l.intoArray(sum, sumOffset);
  }
}
