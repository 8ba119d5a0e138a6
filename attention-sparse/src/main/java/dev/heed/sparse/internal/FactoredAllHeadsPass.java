package dev.heed.sparse.internal;

import java.util.Arrays;
import java.util.BitSet;

/**
 * The all-heads path with factored weights ({@link FactoredMath}) over the factored layout of the
 * packed node table: no per-entry exponential and no row maximum. Each node's two factors {@code
 * exp(k - K)} and {@code exp(slope · (k - K))} (K: each head's largest key term over all nodes)
 * take the place of its key terms in the table (the same five cache lines per node), each row
 * computes one per-row factor, and each entry costs a compare, a multiply and a blend: 1.2× faster
 * for the whole layer at 1M nodes than the exact path on its table.
 *
 * <p>The weights are relative to a bound from K rather than to the row's own maximum, so a row
 * whose scores all lie more than about 41 below its bound (a head's sum under {@link
 * FactoredMath#MIN_SUM}) is recomputed with the exact online softmax, keys read from the caller's
 * array and values from the table. Outputs agree with the exact path to within rounding (the float
 * difference {@code k - K} is rounded once, as {@code q + k} is on the exact path), not bit for
 * bit; they are identical for any thread count and whether or not weights are asked for (each
 * entry's factored weight over its head's sum). Where {@code q + k} itself loses the key's digits
 * to rounding (inputs near {@link Float#MAX_VALUE}), the factored weights keep them and the two
 * paths can differ by more; both stay finite convex combinations.
 *
 * <p>With bfloat16 value rows ({@link dev.heed.attention.NodeRowPrecision#BFLOAT16}) the table
 * holds the same factors and the values rounded to 8 significand bits (192 bytes per node, three
 * cache lines instead of five); the weights are the same bits as with float32 rows, and only the
 * weighted sum sees the rounding.
 *
 * <p>Thread safety: as {@link CsrPass}.
 */
final class FactoredAllHeadsPass extends AllHeadsPass {

  private final FactoredMath factored;
  private final float[] keyMax;
  private final boolean bfloat16;

  /**
   * Creates the pass over a CSR graph.
   *
   * @param table the packed node table, filled in its factored layout by {@link #fill} before any
   *     row runs
   * @param keyMax input, not modified: each head's largest key term over all nodes
   * @param bfloat16 whether the table holds its value rows as bfloat16 ({@link
   *     PackedNodeTable#BFLOAT16_ROW}); rows recomputed exactly, and rows of one entry, then read
   *     the caller's float32 values
   * @param tableReads the nodes whose table rows are read ({@link TableRowReads}), or null: every
   *     node's
   */
  FactoredAllHeadsPass(
      CsrCall call,
      RowMath math,
      boolean prefetch,
      float[] table,
      float[] keyMax,
      boolean bfloat16,
      BitSet tableReads) {
    super(
        call,
        math,
        prefetch,
        table,
        false,
        PackedNodeTable.FACTORED_OFFSET,
        bfloat16 ? PackedNodeTable.bfloat16ValueRow(0) : PackedNodeTable.factoredValueRow(0),
        bfloat16 ? PackedNodeTable.BFLOAT16_ROW : PackedNodeTable.FACTORED_ROW,
        bfloat16,
        tableReads);
    assert csr != null && table != null && keyMax.length == AllHeadsMath.HEADS;
    this.factored = math.factored();
    this.keyMax = keyMax;
    this.bfloat16 = bfloat16;
  }

  @Override
  boolean pack(int from, int to) {
    return bfloat16
        ? factored.packBfloat16(key, value, from, to, keyMax, slope, table)
        : factored.pack(key, value, from, to, keyMax, slope, table);
  }

  /** The factored copy checks values only: the key maxima have checked every key term. */
  @Override
  boolean checkUnpacked(int from, int to) {
    return valuesFinite(from, to);
  }

  /**
   * Factored rows read their sources from the graph: they need only each source's table position,
   * so copying a group's columns first was a pass for nothing (about 1 % of the R-MAT layer).
   */
  @Override
  boolean readsColumns() {
    return false;
  }

  /** Factored rows read no key terms. */
  @Override
  float[] groupKeys(int[] columns, int count, Scratch sc) {
    return null;
  }

  @Override
  void oneBlockRow(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    int[] rowBase = sc.rowBase;
    if (columns != null) {
      for (int t = 0; t < count; t++) {
        rowBase[t] = valueRow(columns[offset + t]);
      }
    } else {
      int first = (int) firstEntry;
      for (int t = 0; t < count; t++) {
        rowBase[t] = valueRow(csr.column(first + t));
      }
    }
    float[] s = sc.scores;
    int q = i * keyWidth;
    int o = i * valueWidth;
    if (!(bfloat16
        ? factored.rowBfloat16(query, q, keyMax, slope, table, rowBase, count, s, out, o)
        : factored.row(query, q, keyMax, slope, table, rowBase, count, s, out, o))) {
      // reuses the scratch's first count columns: the later rows of a group sit after this one's
      exactRow(i, csr.rowStart(i), count, firstEntry, sc);
    } else if (weights != null) {
      // the row method leaves the weights relative to the bound in the scratch, their sums after
      int w = (int) (firstEntry * heads);
      int sums = count * heads;
      for (int t = 0; t < sums; t += heads) {
        for (int h = 0; h < heads; h++) {
          weights[w + t + h] = s[t + h] / s[sums + h];
        }
      }
    }
  }

  /**
   * Block by block, each block's rows loaded ahead as on the exact path; the sums and the
   * accumulator just add up (the bound does not move), and the row is recomputed exactly if a
   * head's sum is too small.
   */
  @Override
  void longRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    float[] acc = sc.acc;
    float[] sum = sc.sum;
    Arrays.fill(acc, 0f);
    Arrays.fill(sum, 0f);
    int[] rowBase = sc.rowBase;
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      for (int t = 0; t < count; t++) {
        rowBase[t] = valueRow(csr.column(start + b + t));
      }
      if (prefetch && b + BLOCK < degree) {
        sc.prefetchSink += prefetch(start + b + BLOCK, start + degree);
      }
      int q = i * keyWidth;
      if (bfloat16) {
        factored.blockBfloat16(query, q, keyMax, slope, table, rowBase, count, sc.scores, sum, acc);
      } else {
        factored.block(query, q, keyMax, slope, table, rowBase, count, sc.scores, sum, acc);
      }
      if (weights != null) {
        System.arraycopy(sc.scores, 0, weights, (start + b) * heads, count * heads);
      }
    }
    for (int h = 0; h < heads; h++) {
      if (!(sum[h] >= FactoredMath.MIN_SUM)) {
        exactRow(i, start, degree, firstEntry, sc);
        return;
      }
    }
    if (weights != null) {
      for (int w = start * heads, end = (start + degree) * heads; w < end; w += heads) {
        for (int h = 0; h < heads; h++) {
          weights[w + h] /= sum[h];
        }
      }
    }
    int outBase = i * valueWidth;
    for (int h = 0; h < heads; h++) {
      float total = sum[h];
      for (int k = h * valueDim, end = k + valueDim; k < end; k++) {
        out[outBase + k] = acc[k] / total;
      }
    }
  }
}
