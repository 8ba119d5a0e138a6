package dev.heed.sparse.simd;

import static dev.heed.sparse.internal.AllHeadsMath.HEADS;

import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.Bfloat16;
import dev.heed.sparse.internal.FactoredMath;
import dev.heed.sparse.internal.PackedNodeTable;
import java.util.Arrays;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.IntVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link FactoredMath} on the Vector API, in the one species {@link VectorExp#SPECIES} of exactly 8
 * floats (see {@link VectorRowMath}): per entry, one vector of E factors, one of F factors, a
 * compare, a multiply and a blend, then the weighted sum with 8 accumulators in registers, written
 * out in each method that needs it (vectors are not passed through helper methods C2 may not
 * inline; {@link #addFactoredWeights} takes and returns arrays only).
 *
 * <p>Thread safety: stateless.
 */
final class VectorFactoredMath implements FactoredMath {

  private static final VectorSpecies<Float> WIDE = VectorExp.SPECIES;

  private static final int WIDE_LANES = WIDE.length();

  /** The high 16 bits of a word: its high bfloat16 as a float. */
  private static final int HIGH_HALF = 0xFFFF0000;

  VectorFactoredMath() {}

  @Override
  public boolean keyMaxima(float[] key, int from, int to, float[] max) {
    assert WIDE_LANES == HEADS;
    FloatVector m = FloatVector.fromArray(WIDE, max, 0);
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      FloatVector k = FloatVector.fromArray(WIDE, key, c * HEADS);
      m = m.max(k);
      check = check.add(k.sub(k));
    }
    m.intoArray(max, 0);
    return check.eq(check).allTrue();
  }

  @Override
  public boolean pack(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table) {
    assert WIDE_LANES == HEADS;
    FloatVector top = FloatVector.fromArray(WIDE, keyMax, 0);
    FloatVector check = FloatVector.zero(WIDE);
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.factoredValueRow(c);
      int v = c * HEADS * HEADS;
      FloatVector d = FloatVector.fromArray(WIDE, key, c * HEADS).sub(top);
      VectorExp.expNonPositive(d).intoArray(table, p - PackedNodeTable.FACTORED_E_BEFORE_VALUES);
      VectorExp.expNonPositive(d.mul(negativeSlope))
          .intoArray(table, p - PackedNodeTable.FACTORED_F_BEFORE_VALUES);
      FloatVector v0 = FloatVector.fromArray(WIDE, value, v);
      FloatVector v1 = FloatVector.fromArray(WIDE, value, v + 8);
      FloatVector v2 = FloatVector.fromArray(WIDE, value, v + 16);
      FloatVector v3 = FloatVector.fromArray(WIDE, value, v + 24);
      FloatVector v4 = FloatVector.fromArray(WIDE, value, v + 32);
      FloatVector v5 = FloatVector.fromArray(WIDE, value, v + 40);
      FloatVector v6 = FloatVector.fromArray(WIDE, value, v + 48);
      FloatVector v7 = FloatVector.fromArray(WIDE, value, v + 56);
      v0.intoArray(table, p);
      v1.intoArray(table, p + 8);
      v2.intoArray(table, p + 16);
      v3.intoArray(table, p + 24);
      v4.intoArray(table, p + 32);
      v5.intoArray(table, p + 40);
      v6.intoArray(table, p + 48);
      v7.intoArray(table, p + 56);
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
  public boolean packBfloat16(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table) {
    assert WIDE_LANES == HEADS;
    FloatVector top = FloatVector.fromArray(WIDE, keyMax, 0);
    FloatVector check = FloatVector.zero(WIDE);
    float limit = Bfloat16.LARGEST_ROUNDED_FINITE;
    int half = HEADS * HEADS / 2;
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.bfloat16ValueRow(c);
      int v = c * HEADS * HEADS;
      FloatVector d = FloatVector.fromArray(WIDE, key, c * HEADS).sub(top);
      VectorExp.expNonPositive(d).intoArray(table, p - PackedNodeTable.FACTORED_E_BEFORE_VALUES);
      VectorExp.expNonPositive(d.mul(negativeSlope))
          .intoArray(table, p - PackedNodeTable.FACTORED_F_BEFORE_VALUES);
      for (int g = 0; g < half; g += HEADS) {
        FloatVector lo = FloatVector.fromArray(WIDE, value, v + g);
        FloatVector hi = FloatVector.fromArray(WIDE, value, v + half + g);
        check = check.add(lo.sub(lo)).add(hi.sub(hi));
        // round to nearest even (Bfloat16.round): add 0x7FFF plus the kept part's lowest bit
        IntVector a = (IntVector) lo.max(-limit).min(limit).reinterpretAsInts();
        IntVector b = (IntVector) hi.max(-limit).min(limit).reinterpretAsInts();
        IntVector low =
            a.add(a.lanewise(VectorOperators.LSHR, 16).and(1))
                .add(0x7FFF)
                .lanewise(VectorOperators.LSHR, 16);
        IntVector high = b.add(b.lanewise(VectorOperators.LSHR, 16).and(1)).add(0x7FFF);
        low.or(high.and(HIGH_HALF)).reinterpretAsFloats().intoArray(table, p + g);
      }
    }
    return check.eq(check).allTrue();
  }

  @Override
  public boolean rowBfloat16(
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
    assert WIDE_LANES == HEADS;
    int lw = count * HEADS;
    Arrays.fill(s, lw, lw + HEADS, 0f);
    addFactoredWeights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, s, lw);
    if (!FloatVector.fromArray(WIDE, s, lw).compare(VectorOperators.GE, MIN_SUM).allTrue()) {
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
      int w = t * HEADS;
      // word j: value j (head j / 8) in its low half, decoded by a shift (Bfloat16.low), value
      // j + 32 (head j / 8 + 4) in its high half, decoded by a mask (Bfloat16.high)
      IntVector w0 = (IntVector) FloatVector.fromArray(WIDE, table, r).reinterpretAsInts();
      IntVector w1 = (IntVector) FloatVector.fromArray(WIDE, table, r + 8).reinterpretAsInts();
      IntVector w2 = (IntVector) FloatVector.fromArray(WIDE, table, r + 16).reinterpretAsInts();
      IntVector w3 = (IntVector) FloatVector.fromArray(WIDE, table, r + 24).reinterpretAsInts();
      a0 =
          w0.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 =
          w1.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          w2.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          w3.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 = w0.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 = w1.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 = w2.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 = w3.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
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
  public void blockBfloat16(
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
    assert WIDE_LANES == HEADS;
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
      int w = t * HEADS;
      IntVector w0 = (IntVector) FloatVector.fromArray(WIDE, table, r).reinterpretAsInts();
      IntVector w1 = (IntVector) FloatVector.fromArray(WIDE, table, r + 8).reinterpretAsInts();
      IntVector w2 = (IntVector) FloatVector.fromArray(WIDE, table, r + 16).reinterpretAsInts();
      IntVector w3 = (IntVector) FloatVector.fromArray(WIDE, table, r + 24).reinterpretAsInts();
      a0 =
          w0.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w]), a0);
      a1 =
          w1.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 1]), a1);
      a2 =
          w2.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 2]), a2);
      a3 =
          w3.lanewise(VectorOperators.LSHL, 16)
              .reinterpretAsFloats()
              .fma(FloatVector.broadcast(WIDE, s[w + 3]), a3);
      a4 = w0.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 4]), a4);
      a5 = w1.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 5]), a5);
      a6 = w2.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 6]), a6);
      a7 = w3.and(HIGH_HALF).reinterpretAsFloats().fma(FloatVector.broadcast(WIDE, s[w + 7]), a7);
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
  public boolean row(
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
    assert WIDE_LANES == HEADS;
    int lw = count * HEADS;
    Arrays.fill(s, lw, lw + HEADS, 0f);
    addFactoredWeights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, s, lw);
    if (!FloatVector.fromArray(WIDE, s, lw).compare(VectorOperators.GE, MIN_SUM).allTrue()) {
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
      int w = t * HEADS;
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
  public void block(
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
    assert WIDE_LANES == HEADS;
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
      int w = t * HEADS;
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
   * The factored weights of a block's entries ({@link FactoredMath#row}): entry t's into {@code
   * s[t·8 ..]}, and their sums, in order of t, added to {@code sum[sumOffset ..]}. Arrays in and
   * out, so no vector crosses the call.
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
      FloatVector e =
          FloatVector.fromArray(WIDE, table, r - PackedNodeTable.FACTORED_E_BEFORE_VALUES);
      FloatVector p =
          FloatVector.fromArray(WIDE, table, r - PackedNodeTable.FACTORED_F_BEFORE_VALUES)
              .mul(b)
              .blend(e, e.compare(VectorOperators.GE, threshold));
      p.intoArray(s, t * HEADS);
      l = l.add(p);
    }
    l.intoArray(sum, sumOffset);
  }
}
