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
      factors(key, c, keyMax, negativeSlope, table, p);
      finite &= ScalarAllHeadsMath.copyValueRow(value, c, table, p);
    }
    return finite;
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
    boolean finite = true;
    int half = HEADS * HEADS / 2;
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.bfloat16ValueRow(c);
      factors(key, c, keyMax, negativeSlope, table, p);
      int v = c * HEADS * HEADS;
      for (int j = 0; j < half; j++) {
        float lo = value[v + j];
        float hi = value[v + j + half];
        finite &= Float.isFinite(lo) & Float.isFinite(hi);
        table[p + j] = Float.intBitsToFloat(Bfloat16.pair(lo, hi));
      }
    }
    return finite;
  }

  /** Node c's E and F factors, before its value row at p. */
  private static void factors(
      float[] key, int c, float[] keyMax, float negativeSlope, float[] table, int p) {
    int e = p - PackedNodeTable.FACTORED_E_BEFORE_VALUES;
    int f = p - PackedNodeTable.FACTORED_F_BEFORE_VALUES;
    for (int h = 0; h < HEADS; h++) {
      float d = key[c * HEADS + h] - keyMax[h];
      table[e + h] = FastExp.expNonPositive(d);
      table[f + h] = FastExp.expNonPositive(d * negativeSlope);
    }
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
    float[] sum = new float[HEADS];
    float[] acc = new float[HEADS * HEADS];
    blockBfloat16(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum, acc);
    return finishRow(sum, acc, count, s, out, outOffset);
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
    weights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum);
    int half = HEADS * HEADS / 2;
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < HEADS; h++) {
        float p = s[t * HEADS + h];
        for (int x = 0; x < HEADS; x++) {
          int k = h * HEADS + x;
          int word = Float.floatToRawIntBits(table[r + k % half]);
          float v = k < half ? Bfloat16.low(word) : Bfloat16.high(word);
          acc[k] = Math.fma(p, v, acc[k]);
        }
      }
    }
  }

  /** The sums into {@code s[count·8 ..]}; false if one is too small, else the outputs. */
  private static boolean finishRow(
      float[] sum, float[] acc, int count, float[] s, float[] out, int outOffset) {
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
    return finishRow(sum, acc, count, s, out, outOffset);
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
    weights(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum);
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

  /** The factored weights of a block's entries into {@code s[t·8 + h]}, added to {@code sum}. */
  private static void weights(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] sum) {
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
  }
}
