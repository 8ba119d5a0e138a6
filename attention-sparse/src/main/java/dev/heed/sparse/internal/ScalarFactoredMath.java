package dev.heed.sparse.internal;

import static dev.heed.sparse.internal.AllHeadsMath.HEADS;

import dev.heed.attention.internal.FastExp;

/**
 * Plain Java loops for {@link FactoredMath}: the bit-for-bit reference that the vector forms are
 * tested against. The kernel never runs the row methods ({@link RowMath#servesAllHeads()} is false
 * for the scalar implementation), so their small work arrays are allocated per call.
 *
 * <p>Thread safety: stateless.
 */
final class ScalarFactoredMath implements FactoredMath {

  static final ScalarFactoredMath INSTANCE = new ScalarFactoredMath();

  private ScalarFactoredMath() {}

  @Override
  public boolean keyMaxima(float[] key, int from, int to, float[] max) {
    boolean finite = true;
    for (int c = from; c < to; c++) {
      for (int h = 0; h < HEADS; h++) {
        float k = key[c * HEADS + h];
        max[h] = Math.max(max[h], k);
        finite &= Float.isFinite(k);
      }
    }
    return finite;
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
    boolean finite = true;
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.factoredValueRow(c);
      int e = p - PackedNodeTable.FACTORED_E_BEFORE_VALUES;
      int f = p - PackedNodeTable.FACTORED_F_BEFORE_VALUES;
      for (int h = 0; h < HEADS; h++) {
        float d = key[c * HEADS + h] - keyMax[h];
        table[e + h] = FastExp.expNonPositive(d);
        table[f + h] = FastExp.expNonPositive(d * negativeSlope);
      }
      finite &= ScalarAllHeadsMath.copyValueRow(value, c, table, p);
    }
    return finite;
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
    float[] sum = new float[HEADS];
    float[] acc = new float[HEADS * HEADS];
    block(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum, acc);
    System.arraycopy(sum, 0, s, count * HEADS, HEADS);
    for (int h = 0; h < HEADS; h++) {
      if (!(sum[h] >= MIN_SUM)) {
        return false;
      }
    }
    for (int h = 0; h < HEADS; h++) {
      for (int x = 0; x < HEADS; x++) {
        out[outOffset + h * HEADS + x] = acc[h * HEADS + x] / sum[h];
      }
    }
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
    float[] rest = new float[HEADS];
    float[] threshold = new float[HEADS];
    for (int h = 0; h < HEADS; h++) {
      float qk = q[qOffset + h] + keyMax[h];
      rest[h] = FastExp.expNonPositive(Math.max(qk, 0f) * (negativeSlope - 1f));
      threshold[h] = qk < 0f ? Float.POSITIVE_INFINITY : FastExp.expNonPositive(Math.min(-qk, 0f));
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      int e = r - PackedNodeTable.FACTORED_E_BEFORE_VALUES;
      int f = r - PackedNodeTable.FACTORED_F_BEFORE_VALUES;
      for (int h = 0; h < HEADS; h++) {
        float eh = table[e + h];
        float p = eh >= threshold[h] ? eh : table[f + h] * rest[h];
        s[t * HEADS + h] = p;
        sum[h] += p;
      }
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < HEADS; h++) {
        float p = s[t * HEADS + h];
        for (int x = 0; x < HEADS; x++) {
          int k = h * HEADS + x;
          acc[k] = Math.fma(p, table[r + k], acc[k]);
        }
      }
    }
  }
}
