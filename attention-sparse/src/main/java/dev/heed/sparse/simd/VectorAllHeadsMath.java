package dev.heed.sparse.simd;

import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.AllHeadsMath;
import dev.heed.sparse.internal.PackedNodeTable;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link AllHeadsMath} on the Vector API, in the one species {@link VectorExp#SPECIES} of exactly 8
 * floats (see {@link VectorRowMath}): a node's key terms are one vector, and each head's 8 value
 * floats one vector, so a block's weighted sum keeps 8 accumulators in registers. The weighted-sum
 * loop is written out in each method that needs it: vectors are not passed through helper methods
 * C2 may not inline.
 *
 * <p>Thread safety: stateless.
 */
final class VectorAllHeadsMath implements AllHeadsMath {

  private static final VectorSpecies<Float> WIDE = VectorExp.SPECIES;

  private static final int WIDE_LANES = WIDE.length();

  VectorAllHeadsMath() {}

  @Override
  public boolean additiveScores(
      float[] q,
      int qOffset,
      float[] keys,
      int keysOffset,
      int count,
      float negativeSlope,
      float[] s) {
    assert WIDE_LANES == HEADS;
    FloatVector query = FloatVector.fromArray(WIDE, q, qOffset);
    // e · 0 is 0 for finite e and NaN for infinite or NaN e, so one NaN lane marks a bad score
    FloatVector check = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector z = query.add(FloatVector.fromArray(WIDE, keys, keysOffset + t * HEADS));
      FloatVector e = z.max(z.mul(negativeSlope));
      e.intoArray(s, t * HEADS);
      check = check.add(e.mul(0f));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public boolean pack(float[] key, float[] value, int from, int to, float[] table) {
    assert WIDE_LANES == HEADS;
    // v - v is 0 for a finite v and NaN for NaN or an infinity: one NaN lane marks a bad input
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.exactValueRow(c);
      int v = c * HEADS * HEADS;
      FloatVector k = FloatVector.fromArray(WIDE, key, c * HEADS);
      FloatVector v0 = FloatVector.fromArray(WIDE, value, v);
      FloatVector v1 = FloatVector.fromArray(WIDE, value, v + 8);
      FloatVector v2 = FloatVector.fromArray(WIDE, value, v + 16);
      FloatVector v3 = FloatVector.fromArray(WIDE, value, v + 24);
      FloatVector v4 = FloatVector.fromArray(WIDE, value, v + 32);
      FloatVector v5 = FloatVector.fromArray(WIDE, value, v + 40);
      FloatVector v6 = FloatVector.fromArray(WIDE, value, v + 48);
      FloatVector v7 = FloatVector.fromArray(WIDE, value, v + 56);
      k.intoArray(table, p - PackedNodeTable.EXACT_KEYS_BEFORE_VALUES);
      v0.intoArray(table, p);
      v1.intoArray(table, p + 8);
      v2.intoArray(table, p + 16);
      v3.intoArray(table, p + 24);
      v4.intoArray(table, p + 32);
      v5.intoArray(table, p + 40);
      v6.intoArray(table, p + 48);
      v7.intoArray(table, p + 56);
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
  public boolean additiveScoresInTable(
      float[] q,
      int qOffset,
      float[] table,
      int[] rowBase,
      int count,
      float negativeSlope,
      float[] s) {
    assert WIDE_LANES == HEADS;
    FloatVector query = FloatVector.fromArray(WIDE, q, qOffset);
    // e · 0 is 0 for finite e and NaN for infinite or NaN e, so one NaN lane marks a bad score
    FloatVector check = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector z =
          query.add(
              FloatVector.fromArray(
                  WIDE, table, rowBase[t] - PackedNodeTable.EXACT_KEYS_BEFORE_VALUES));
      FloatVector e = z.max(z.mul(negativeSlope));
      e.intoArray(s, t * HEADS);
      check = check.add(e.mul(0f));
    }
    return check.eq(check).allTrue();
  }

  @Override
  public void softmaxAccumulate(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work) {
    assert WIDE_LANES == HEADS;
    FloatVector blockMax = FloatVector.fromArray(WIDE, s, 0);
    for (int t = 1; t < count; t++) {
      blockMax = blockMax.max(FloatVector.fromArray(WIDE, s, t * HEADS));
    }
    FloatVector oldMax = FloatVector.fromArray(WIDE, max, 0);
    FloatVector newMax = oldMax.max(blockMax);
    newMax.intoArray(max, 0);
    // t = -1 rescales by exp(oldMax - newMax), t >= 0 exponentiates the block's scores
    FloatVector l = FloatVector.fromArray(WIDE, sum, 0);
    for (int t = -1; t < count; t++) {
      FloatVector p =
          VectorExp.expNonPositive(
              t < 0 ? oldMax.sub(newMax) : FloatVector.fromArray(WIDE, s, t * HEADS).sub(newMax));
      if (t < 0) {
        l = l.mul(p);
        p.intoArray(work, 0);
      } else {
        p.intoArray(s, t * HEADS);
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
      int w = t * HEADS;
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
  public void softmaxRow(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] out,
      int outOffset) {
    assert WIDE_LANES == HEADS;
    // max(-Infinity, m) is m, and the rescale of a zero accumulator and sum by exp(-Infinity) = 0
    // leaves +0: starting from the block maximum and zeros gives the same bits
    FloatVector rowMax = FloatVector.fromArray(WIDE, s, 0);
    for (int t = 1; t < count; t++) {
      rowMax = rowMax.max(FloatVector.fromArray(WIDE, s, t * HEADS));
    }
    rowMax.intoArray(max, 0);
    FloatVector l = FloatVector.zero(WIDE);
    for (int t = 0; t < count; t++) {
      FloatVector p =
          VectorExp.expNonPositive(FloatVector.fromArray(WIDE, s, t * HEADS).sub(rowMax));
      p.intoArray(s, t * HEADS);
      l = l.add(p);
    }
    l.intoArray(sum, 0);
    // softmaxAccumulate's weighted-sum loop, repeated so that the accumulators start as
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
      int w = t * HEADS;
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
  public void singleEntryRow(float[] value, int rowBase, float[] out, int outOffset) {
    assert WIDE_LANES == HEADS;
    for (int x = 0; x < HEADS * HEADS; x += HEADS) {
      FloatVector.fromArray(WIDE, value, rowBase + x).add(0f).intoArray(out, outOffset + x);
    }
  }
}
