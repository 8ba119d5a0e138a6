package dev.heed.sparse;

import dev.heed.attention.internal.FastExp;
import dev.heed.sparse.internal.RowMath;
import java.util.Arrays;

/**
 * Plain Java loops for {@link RowMath}: the fallback when the Vector API cannot be used. C2 does
 * not vectorise these loops (measured in /work/shared/roofline: 0.07–0.15× of C). Measured on a
 * busy machine, the whole kernel ran about 1.8× slower with these loops for GAT scores at 1M nodes,
 * and about as fast for GATv2 and dot-product scores of 8-float heads.
 *
 * <p>Thread safety: stateless.
 */
final class ScalarRowMath implements RowMath {

  static final ScalarRowMath INSTANCE = new ScalarRowMath();

  private ScalarRowMath() {}

  @Override
  public String describe() {
    return "scalar";
  }

  @Override
  public float dot(float[] a, int ao, float[] b, int bo, int length) {
    float s = 0f;
    for (int k = 0; k < length; k++) {
      s += a[ao + k] * b[bo + k];
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
    for (int k = 0; k < length; k++) {
      float z = q[qo + k] + key[ko + k];
      s += att[ao + k] * Math.max(z, z * negativeSlope);
    }
    return s;
  }

  @Override
  public void gatherRows(float[] table, int width, int[] rows, int count, float[] out) {
    for (int t = 0; t < count; t++) {
      int from = rows[t] * width;
      int to = t * width;
      for (int x = 0; x < width; x++) {
        out[to + x] = table[from + x];
      }
    }
  }

  @Override
  public float max(float[] s, int offset, int length) {
    float m = s[offset];
    for (int k = 1; k < length; k++) {
      m = Math.max(m, s[offset + k]);
    }
    return m;
  }

  @Override
  public float expShiftSum(float[] s, int offset, int length, float shift) {
    float sum = 0f;
    for (int k = offset, end = offset + length; k < end; k++) {
      float p = FastExp.expNonPositive(s[k] - shift);
      s[k] = p;
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
    for (int x = 0; x < length; x++) {
      float a = acc[accOffset + x];
      for (int t = 0; t < count; t++) {
        a += w[wOffset + t] * value[rowBase[t] + headOffset + x];
      }
      acc[accOffset + x] = a;
    }
  }

  @Override
  public void scale(float[] y, int offset, int length, float factor) {
    for (int k = offset, end = offset + length; k < end; k++) {
      y[k] *= factor;
    }
  }

  /**
   * Returns false: the all-heads methods here are the reference that the vector ones must match bit
   * for bit (tested), not a fast path. Measured at 1M nodes, GAT scores, one thread, the kernel ran
   * about 2× slower with these plain loops on the all-heads path than on the per-head path.
   */
  @Override
  public boolean servesAllHeads() {
    return false;
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
    boolean finite = true;
    for (int t = 0; t < count; t++) {
      for (int h = 0; h < ALL_HEADS; h++) {
        float z = q[qOffset + h] + keys[keysOffset + t * ALL_HEADS + h];
        float e = Math.max(z, z * negativeSlope);
        s[t * ALL_HEADS + h] = e;
        finite &= Float.isFinite(e);
      }
    }
    return finite;
  }

  @Override
  public boolean packAllHeads(
      float[] key, float[] value, int from, int to, float[] table, int tableOffset) {
    boolean finite = true;
    for (int c = from; c < to; c++) {
      int p = tableOffset + c * PACKED_ROW;
      for (int h = 0; h < ALL_HEADS; h++) {
        float k = key[c * ALL_HEADS + h];
        table[p + h] = k;
        finite &= Float.isFinite(k);
      }
      p += ALL_HEADS;
      finite &= copyValueRow(value, c, table, p);
    }
    return finite;
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
    boolean finite = true;
    for (int t = 0; t < count; t++) {
      int k = rowBase[t] - ALL_HEADS;
      for (int h = 0; h < ALL_HEADS; h++) {
        float z = q[qOffset + h] + table[k + h];
        float e = Math.max(z, z * negativeSlope);
        s[t * ALL_HEADS + h] = e;
        finite &= Float.isFinite(e);
      }
    }
    return finite;
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
    for (int h = 0; h < ALL_HEADS; h++) {
      float m = s[h];
      for (int t = 1; t < count; t++) {
        m = Math.max(m, s[t * ALL_HEADS + h]);
      }
      float newMax = Math.max(max[h], m);
      float f = FastExp.expNonPositive(max[h] - newMax);
      max[h] = newMax;
      float l = sum[h] * f;
      for (int x = h * ALL_HEADS, end = x + ALL_HEADS; x < end; x++) {
        acc[x] *= f;
      }
      for (int t = 0; t < count; t++) {
        float p = FastExp.expNonPositive(s[t * ALL_HEADS + h] - newMax);
        s[t * ALL_HEADS + h] = p;
        l += p;
      }
      sum[h] = l;
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < ALL_HEADS; h++) {
        float p = s[t * ALL_HEADS + h];
        for (int x = h * ALL_HEADS, end = x + ALL_HEADS; x < end; x++) {
          acc[x] = Math.fma(p, value[r + x], acc[x]);
        }
      }
    }
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
    Arrays.fill(max, 0, ALL_HEADS, Float.NEGATIVE_INFINITY);
    Arrays.fill(sum, 0, ALL_HEADS, 0f);
    Arrays.fill(acc, 0, ALL_HEADS * ALL_HEADS, 0f);
    softmaxAccumulateAllHeads(s, count, max, sum, rowBase, value, acc, work);
    for (int h = 0; h < ALL_HEADS; h++) {
      for (int x = h * ALL_HEADS, end = x + ALL_HEADS; x < end; x++) {
        out[outOffset + x] = acc[x] / sum[h];
      }
    }
  }

  @Override
  public void singleEntryRowAllHeads(float[] value, int rowBase, float[] out, int outOffset) {
    for (int x = 0; x < ALL_HEADS * ALL_HEADS; x++) {
      out[outOffset + x] = value[rowBase + x] + 0f;
    }
  }

  @Override
  public boolean keyMaximaAllHeads(float[] key, int from, int to, float[] max) {
    boolean finite = true;
    for (int c = from; c < to; c++) {
      for (int h = 0; h < ALL_HEADS; h++) {
        float k = key[c * ALL_HEADS + h];
        max[h] = Math.max(max[h], k);
        finite &= Float.isFinite(k);
      }
    }
    return finite;
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
    boolean finite = true;
    for (int c = from; c < to; c++) {
      int p = tableOffset + c * FACTORED_ROW;
      for (int h = 0; h < ALL_HEADS; h++) {
        float d = key[c * ALL_HEADS + h] - keyMax[h];
        table[p + h] = FastExp.expNonPositive(d);
        table[p + ALL_HEADS + h] = FastExp.expNonPositive(d * negativeSlope);
      }
      p += 2 * ALL_HEADS;
      finite &= copyValueRow(value, c, table, p);
    }
    return finite;
  }

  // The scalar factored methods are the bit-for-bit reference of the vector ones (tests); the
  // kernel never runs them (servesAllHeads() is false here), so their small work arrays are
  // allocated per call.
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
    float[] sum = new float[ALL_HEADS];
    float[] acc = new float[ALL_HEADS * ALL_HEADS];
    factoredBlockAllHeads(q, qOffset, keyMax, negativeSlope, table, rowBase, count, s, sum, acc);
    System.arraycopy(sum, 0, s, count * ALL_HEADS, ALL_HEADS);
    for (int h = 0; h < ALL_HEADS; h++) {
      if (!(sum[h] >= FACTORED_MIN_SUM)) {
        return false;
      }
    }
    for (int h = 0; h < ALL_HEADS; h++) {
      for (int x = 0; x < ALL_HEADS; x++) {
        out[outOffset + h * ALL_HEADS + x] = acc[h * ALL_HEADS + x] / sum[h];
      }
    }
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
    float[] rest = new float[ALL_HEADS];
    float[] threshold = new float[ALL_HEADS];
    for (int h = 0; h < ALL_HEADS; h++) {
      float qk = q[qOffset + h] + keyMax[h];
      rest[h] = FastExp.expNonPositive(Math.max(qk, 0f) * (negativeSlope - 1f));
      threshold[h] = qk < 0f ? Float.POSITIVE_INFINITY : FastExp.expNonPositive(Math.min(-qk, 0f));
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < ALL_HEADS; h++) {
        float e = table[r - 2 * ALL_HEADS + h];
        float p = e >= threshold[h] ? e : table[r - ALL_HEADS + h] * rest[h];
        s[t * ALL_HEADS + h] = p;
        sum[h] += p;
      }
    }
    for (int t = 0; t < count; t++) {
      int r = rowBase[t];
      for (int h = 0; h < ALL_HEADS; h++) {
        float p = s[t * ALL_HEADS + h];
        for (int x = 0; x < ALL_HEADS; x++) {
          int k = h * ALL_HEADS + x;
          acc[k] = Math.fma(p, table[r + k], acc[k]);
        }
      }
    }
  }

  /** Copies node c's 64 value floats to {@code table[p ..]}; returns whether all are finite. */
  private static boolean copyValueRow(float[] value, int c, float[] table, int p) {
    boolean finite = true;
    for (int x = 0; x < ALL_HEADS * ALL_HEADS; x++) {
      float v = value[c * ALL_HEADS * ALL_HEADS + x];
      table[p + x] = v;
      finite &= Float.isFinite(v);
    }
    return finite;
  }
}
