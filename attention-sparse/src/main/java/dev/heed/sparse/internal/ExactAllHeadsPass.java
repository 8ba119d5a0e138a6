package dev.heed.sparse.internal;

import java.util.BitSet;

/**
 * The all-heads path with the exact online softmax ({@link AllHeadsPass}): per row, scores, row
 * maxima and exponentials. A row that fits in one block runs in one call ({@link
 * AllHeadsMath#softmaxRow}) with its accumulator in registers; longer rows go block by block.
 *
 * <p>Keys and values come from the caller's arrays, or from the exact layout of the packed node
 * table ({@link PackedNodeTable}: a node's key terms and value row together, 5 cache lines instead
 * of up to 7 in two places), whose key terms are then scored in place instead of gathered. Either
 * way the arithmetic is the same, so the outputs and weights are the same bits.
 *
 * <p>Thread safety: as {@link CsrPass}.
 */
final class ExactAllHeadsPass extends AllHeadsPass {

  /**
   * Creates the pass.
   *
   * @param table the packed node table in its exact layout, filled by {@link #fill} before any row
   *     runs; or null to read the caller's arrays
   * @param tableReads the nodes whose table rows are read ({@link TableRowReads}), or null: every
   *     node's; null without a table
   */
  ExactAllHeadsPass(
      CsrCall call, RowMath math, boolean prefetch, float[] table, BitSet tableReads) {
    super(
        call,
        math,
        prefetch,
        table,
        table != null,
        table == null ? 0 : PackedNodeTable.EXACT_OFFSET,
        table == null ? 0 : PackedNodeTable.exactValueRow(0),
        table == null ? AllHeadsMath.HEADS * AllHeadsMath.HEADS : PackedNodeTable.EXACT_ROW,
        false,
        tableReads);
  }

  @Override
  boolean pack(int from, int to) {
    assert table != null;
    return math.pack(key, value, from, to, table);
  }

  /** The exact layout's copy checks key terms and values. */
  @Override
  boolean checkUnpacked(int from, int to) {
    return keysFinite(from, to) && valuesFinite(from, to);
  }

  @Override
  float[] groupKeys(int[] columns, int count, Scratch sc) {
    return table == null ? gatherKeys(columns, count, sc) : null;
  }

  @Override
  boolean readsColumns() {
    return true;
  }

  @Override
  void oneBlockRow(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    float[] s = scores(i, columns, keys, offset, count, firstEntry, sc);
    math.softmaxRow(s, count, sc.max, sc.sum, sc.rowBase, valueRows, out, i * valueWidth);
    if (weights != null) {
      normaliseWeights(count, firstEntry, sc);
    }
  }

  @Override
  void longRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    exactRow(i, start, degree, firstEntry, sc);
  }
}
