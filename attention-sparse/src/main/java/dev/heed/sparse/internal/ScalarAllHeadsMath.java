package dev.heed.sparse.internal;

import static dev.heed.sparse.internal.AllHeadsMath.HEADS;

import dev.heed.attention.internal.FastExp;
import java.util.Arrays;

/**
 * Plain Java loops for {@link AllHeadsMath}: the bit-for-bit reference that the vector forms are
 * tested against. The kernel never runs them ({@link RowMath#servesAllHeads()} is false for the
 * scalar implementation): at 1M nodes, GAT scores, one thread, these loops on the all-heads path
 * ran about 2× slower than the scalar per-head path.
 *
 * <p>Thread safety: stateless.
 */
final class ScalarAllHeadsMath implements AllHeadsMath {

  static final ScalarAllHeadsMath INSTANCE = new ScalarAllHeadsMath();

  private ScalarAllHeadsMath() {}

  @Override
  public boolean additiveScores(
      float[] q,
      int qOffset,
      float[] keys,
      int keysOffset,
      int count,
      float negativeSlope,
      float[] s) {
    boolean finite = true;
    for (int t = 0; t < count; t++) {
      for (int h = 0; h < HEADS; h++) {
        float z = q[qOffset + h] + keys[keysOffset + t * HEADS + h];
        float e = Math.max(z, z * negativeSlope);
        s[t * HEADS + h] = e;
        finite &= Float.isFinite(e);
      }
    }
    return finite;
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
    boolean finite = true;
    for (int t = 0; t < count; t++) {
      int k = rowBase[t] - PackedNodeTable.EXACT_KEYS_BEFORE_VALUES;
      for (int h = 0; h < HEADS; h++) {
        float z = q[qOffset + h] + table[k + h];
        float e = Math.max(z, z * negativeSlope);
        s[t * HEADS + h] = e;
        finite &= Float.isFinite(e);
      }
    }
    return finite;
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
    for (int h = 0; h < HEADS; h++) {
      float m = s[h];
      for (int t = 1; t < count; t++) {
        m = Math.max(m, s[t * HEADS + h]);
      }
      float newMax = Math.max(max[h], m);
      float f = FastExp.expNonPositive(max[h] - newMax);
      max[h] = newMax;
      float l = sum[h] * f;
      for (int x = h * HEADS, end = x + HEADS; x < end; x++) {
        acc[x] *= f;
      }
      for (int t = 0; t < count; t++) {
        float p = FastExp.expNonPositive(s[t * HEADS + h] - newMax);
        s[t * HEADS + h] = p;
        l += p;
      }
      sum[h] = l;
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < HEADS; h++) {
        float p = s[t * HEADS + h];
        for (int x = h * HEADS, end = x + HEADS; x < end; x++) {
          acc[x] = Math.fma(p, value[r + x], acc[x]);
        }
      }
    }
  }

  // A reference, never run by the kernel: its accumulator is allocated per call.
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
    float[] acc = new float[HEADS * HEADS];
    Arrays.fill(max, 0, HEADS, Float.NEGATIVE_INFINITY);
    Arrays.fill(sum, 0, HEADS, 0f);
    softmaxAccumulate(s, count, max, sum, rowBase, value, acc, new float[HEADS]);
    for (int h = 0; h < HEADS; h++) {
      for (int x = h * HEADS, end = x + HEADS; x < end; x++) {
        out[outOffset + x] = acc[x] / sum[h];
      }
    }
  }

  @Override
  public void singleEntryRow(float[] value, int rowBase, float[] out, int outOffset) {
    for (int x = 0; x < HEADS * HEADS; x++) {
      out[outOffset + x] = value[rowBase + x] + 0f;
    }
  }

  @Override
  public boolean pack(float[] key, float[] value, int from, int to, float[] table) {
    boolean finite = true;
    for (int c = from; c < to; c++) {
      int p = PackedNodeTable.exactValueRow(c);
      int k = p - PackedNodeTable.EXACT_KEYS_BEFORE_VALUES;
      for (int h = 0; h < HEADS; h++) {
        float kh = key[c * HEADS + h];
        table[k + h] = kh;
        finite &= Float.isFinite(kh);
      }
      finite &= copyValueRow(value, c, table, p);
    }
    return finite;
  }

  /** Copies node c's 64 value floats to {@code table[p ..]}; returns whether all are finite. */
  static boolean copyValueRow(float[] value, int c, float[] table, int p) {
    boolean finite = true;
    for (int x = 0; x < HEADS * HEADS; x++) {
      float v = value[c * HEADS * HEADS + x];
      table[p + x] = v;
      finite &= Float.isFinite(v);
    }
    return finite;
  }
}
