package dev.heed.sparse.internal;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.FiniteScan;
import dev.heed.attention.internal.FiniteScans;
import java.util.Arrays;
import java.util.BitSet;

/**
 * What the two all-heads passes share: additive (GAT) scores with {@link AllHeadsMath#HEADS} heads
 * of {@link AllHeadsMath#HEADS} value floats (one 256-byte value row per node), all heads of an
 * entry at once: scores edge-major (one vector per entry), one running maximum and sum vector, and
 * one pass over the block's value rows that reads each row once ({@link AllHeadsMath}). Subclasses:
 * {@link ExactAllHeadsPass} and {@link FactoredAllHeadsPass}.
 *
 * <p>Over a CSR graph, consecutive rows of 1 to {@link #BLOCK} entries are taken in groups of at
 * most {@link #BLOCK} entries in all, whose key rows are gathered in one loop: on power-law graphs
 * most rows are short, and a row's own few key loads leave the memory system idle. Each row of a
 * group then runs exactly the operations it would alone, so results depend neither on the grouping
 * nor on how rows are split between threads. Before a group (or a long row's next block) is
 * computed, its rows are loaded ahead ({@link #prefetch}); that only warms the cache.
 *
 * <p>Node rows are read from the caller's arrays or from the packed node table ({@link
 * PackedNodeTable}), whichever the subclass was given; this class only needs where a node's value
 * row starts and how long a table row is. A row of one entry always copies its source's value row
 * from the caller's array (the exact floats, whatever the table holds), so the table needs rows
 * only for the sources of longer rows ({@link TableRowReads}): {@link #fill} packs those and only
 * checks the others' inputs. (The loads ahead still touch a row of one entry's table row: skipping
 * those rows there cost more than the loads.)
 *
 * <p>Thread safety: as {@link CsrPass}.
 */
abstract class AllHeadsPass extends CsrPass {

  private static final FiniteScan FINITE = FiniteScans.preferred();

  final AllHeadsMath math;
  final float slope;

  /** The packed node table, or null: keys and values in the caller's arrays. */
  final float[] table;

  /**
   * The nodes whose table rows are read ({@link TableRowReads}), or null: every node's (or no
   * table).
   */
  private final BitSet tableReads;

  /** Where value rows are read: the table, or the caller's value array. */
  final float[] valueRows;

  /**
   * Where the exact softmax and one-entry rows read value rows: {@link #valueRows}, or the caller's
   * value array where the table holds rounded values (those rows then read the exact floats).
   */
  final float[] exactValues;

  private final PerHeadMath spans;
  private final boolean keysInTable;
  private final int firstRow;
  private final int firstValueRow;
  private final int rowStride;
  private final int exactFirstValueRow;
  private final int exactStride;

  /**
   * Creates the pass; node c's row starts at {@code firstRow + c · rowStride} of {@code table} (or
   * of the caller's value array if {@code table} is null) and its value row {@code firstValueRow -
   * firstRow} floats later.
   *
   * @param keysInTable whether the exact path reads key terms from the table in place
   * @param roundedValues whether the table's values are rounded (bfloat16): the exact softmax then
   *     reads the caller's value array
   * @param tableReads the nodes whose table rows are read ({@link TableRowReads}), or null to fill
   *     every node's row; null without a table
   */
  AllHeadsPass(
      CsrCall call,
      RowMath rowMath,
      boolean prefetch,
      float[] table,
      boolean keysInTable,
      int firstRow,
      int firstValueRow,
      int rowStride,
      boolean roundedValues,
      BitSet tableReads) {
    super(call, prefetch);
    assert applies(call.score(), call.shape()) && rowMath.servesAllHeads();
    assert !keysInTable || table != null;
    assert tableReads == null || table != null;
    this.tableReads = tableReads;
    this.math = rowMath.allHeads();
    this.spans = rowMath.perHead();
    this.slope = ((ScoreFunction.Additive) call.score()).negativeSlope();
    this.table = table;
    this.valueRows = table == null ? value : table;
    this.keysInTable = keysInTable;
    this.firstRow = firstRow;
    this.firstValueRow = firstValueRow;
    this.rowStride = rowStride;
    this.exactValues = roundedValues ? value : valueRows;
    this.exactFirstValueRow = roundedValues ? 0 : firstValueRow;
    this.exactStride = roundedValues ? valueWidth : rowStride;
  }

  /**
   * Whether a call with this score and shape suits the all-heads path: additive scores, {@link
   * AllHeadsMath#HEADS} heads of as many value floats.
   */
  static boolean applies(ScoreFunction score, HeadShape shape) {
    return score instanceof ScoreFunction.Additive
        && shape.heads() == AllHeadsMath.HEADS
        && shape.valueDim() == AllHeadsMath.HEADS;
  }

  /**
   * Fills the packed node table's rows that are read among nodes {@code from..to-1} ({@link
   * #tableReads}) and checks the other nodes' inputs as {@link #pack} would.
   *
   * @return true if every key and value float read is finite
   */
  final boolean fill(int from, int to) {
    if (tableReads == null) {
      return pack(from, to);
    }
    boolean finite = true;
    int c = from;
    while (c < to) {
      int read = tableReads.nextSetBit(c);
      int unread = read < 0 || read > to ? to : read;
      if (unread > c) {
        finite &= checkUnpacked(c, unread);
        c = unread;
      }
      if (c < to) {
        int end = Math.min(to, tableReads.nextClearBit(c));
        finite &= pack(c, end);
        c = end;
      }
    }
    return finite;
  }

  /**
   * Fills the packed node table for nodes {@code from..to-1}.
   *
   * @return true if every key and value float read is finite
   */
  abstract boolean pack(int from, int to);

  /**
   * Checks what {@link #pack} would check for nodes {@code from..to-1} without filling their rows.
   *
   * @return true if every float checked is finite
   */
  abstract boolean checkUnpacked(int from, int to);

  /** Whether the values of nodes {@code from..to-1} are finite. */
  final boolean valuesFinite(int from, int to) {
    return FINITE.isFinite(value, from * valueWidth, to * valueWidth);
  }

  /** Whether the key terms of nodes {@code from..to-1} are finite. */
  final boolean keysFinite(int from, int to) {
    return FINITE.isFinite(key, from * keyWidth, to * keyWidth);
  }

  /** Start of node c's value row in {@link #valueRows}. */
  final int valueRow(int c) {
    return firstValueRow + c * rowStride;
  }

  /** Start of node c's value row in {@link #exactValues}. */
  final int exactValueRow(int c) {
    return exactFirstValueRow + c * exactStride;
  }

  @Override
  final void rows(int from, int to, Scratch sc) {
    if (csr == null) {
      for (int i = from; i < to; i++) {
        row(i, sc);
      }
      return;
    }
    int i = from;
    int j = groupEnd(from, to);
    if (prefetch) {
      sc.prefetchSink += prefetch(csr.rowStart(i), csr.rowStart(j));
    }
    while (i < to) {
      int next = j < to ? groupEnd(j, to) : j;
      if (prefetch && next > j) {
        sc.prefetchSink += prefetch(csr.rowStart(j), csr.rowStart(next));
      }
      int start = csr.rowStart(i);
      int degree = csr.rowEnd(i) - start;
      if (j == i + 1 && (degree == 0 || degree > BLOCK)) {
        row(i, sc);
      } else {
        int count = csr.rowEnd(j - 1) - start;
        int[] columns = readsColumns() ? blockColumns(start, count, sc) : null;
        float[] keys = groupKeys(columns, count, sc);
        for (int r = i; r < j; r++) {
          int rowStart = csr.rowStart(r);
          shortRow(r, columns, keys, rowStart - start, csr.rowEnd(r) - rowStart, rowStart, sc);
        }
      }
      i = j;
      j = next;
    }
  }

  /** End of the group starting at row i: i + 1 for an empty or long row. */
  private int groupEnd(int i, int to) {
    int start = csr.rowStart(i);
    int degree = csr.rowEnd(i) - start;
    if (degree == 0 || degree > BLOCK) {
      return i + 1;
    }
    int j = i + 1;
    while (j < to && csr.rowEnd(j) > csr.rowStart(j) && csr.rowEnd(j) - start <= BLOCK) {
      j++;
    }
    return j;
  }

  /** Row i on its own: one block, or longer. */
  @Override
  final void sourcesRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    if (degree <= BLOCK) {
      int[] columns = blockColumns(start, degree, sc);
      shortRow(i, columns, groupKeys(columns, degree, sc), 0, degree, firstEntry, sc);
      return;
    }
    longRow(i, start, degree, firstEntry, sc);
  }

  /**
   * A whole row of at most {@link #BLOCK} entries: its {@code count} entries have their columns at
   * {@code columns[offset..]} and, if {@code keys} is not null, their key rows at {@code
   * keys[offset·8..]}; {@code firstEntry} is the CSR index of its first entry. A row of one entry
   * is {@link AllHeadsMath#singleEntryRow} of the caller's value row: the same output bits as any
   * other way, and a weight of exactly 1 per head (every score here is finite: non-finite ones are
   * recomputed, clamped).
   */
  private void shortRow(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    if (count == 1) {
      int source = columns != null ? columns[offset] : csr.column((int) firstEntry);
      math.singleEntryRow(value, source * valueWidth, out, i * valueWidth);
      if (weights != null) {
        int w = (int) (firstEntry * heads);
        Arrays.fill(weights, w, w + heads, 1f);
      }
      return;
    }
    oneBlockRow(i, columns, keys, offset, count, firstEntry, sc);
  }

  /**
   * Whether this pass's short rows read their sources from the group's column copy ({@link
   * #blockColumns}); if not, a group's rows are given null columns and read the graph's.
   */
  abstract boolean readsColumns();

  /**
   * The key rows that a group of short rows needs from {@link #gatherKeys}, or null if those rows
   * read no keys or read them in place.
   */
  abstract float[] groupKeys(int[] columns, int count, Scratch sc);

  /** A whole row of 2 to {@link #BLOCK} entries, with the arguments of {@link #shortRow}. */
  abstract void oneBlockRow(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc);

  /** A row of more than {@link #BLOCK} entries, from entry {@code start}. */
  abstract void longRow(int i, int start, int degree, long firstEntry, Scratch sc);

  /**
   * Row i by the exact online softmax, block by block, with keys gathered from the caller's array
   * (or read in the table's exact layout) and values from {@link #exactValues}.
   */
  final void exactRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    beginRow(sc);
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      int[] columns = blockColumns(start + b, count, sc);
      float[] keys = keysInTable ? null : gatherKeys(columns, count, sc);
      if (prefetch && csr != null && b + BLOCK < degree) {
        sc.prefetchSink += prefetch(start + b + BLOCK, start + degree);
      }
      float[] s = scores(i, columns, keys, 0, count, firstEntry + b, sc);
      math.softmaxAccumulate(s, count, sc.max, sc.sum, sc.rowBase, exactValues, sc.acc, sc.work);
    }
    finishRow(i, degree, firstEntry, sc);
  }

  /**
   * The scores of a block of row i (arguments as {@link #shortRow}), edge-major into the scratch
   * (and into the weights array if asked for), and the start of each entry's value row into {@code
   * sc.rowBase} (in {@link #exactValues}).
   */
  final float[] scores(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    float[] s = sc.scores;
    int qb = i * keyWidth;
    int[] rowBase = sc.rowBase;
    for (int t = 0; t < count; t++) {
      rowBase[t] = exactValueRow(columns[offset + t]);
    }
    boolean finite =
        keys != null
            ? math.additiveScores(query, qb, keys, offset * keyWidth, count, slope, s)
            : math.additiveScoresInTable(query, qb, table, rowBase, count, slope, s);
    if (!finite) {
      for (int t = 0; t < count; t++) {
        for (int h = 0; h < heads; h++) {
          if (!Float.isFinite(s[t * heads + h])) {
            s[t * heads + h] = exactAdditiveScore(i, columns[offset + t], h, slope);
          }
        }
      }
    }
    if (weights != null) {
      // the scratch is edge-major, like the weights array
      System.arraycopy(s, 0, weights, (int) (firstEntry * heads), count * heads);
    }
    return s;
  }

  /**
   * Copies the 8-float key rows of the block's entries into scratch, row t at {@code t · 8}: a loop
   * of loads alone keeps many cache misses in flight before the scores need them.
   */
  final float[] gatherKeys(int[] columns, int count, Scratch sc) {
    spans.gatherRows(key, keyWidth, columns, count, sc.keys);
    return sc.keys;
  }

  /**
   * Loads one float from every 64-byte cache line of the node rows of entries {@code
   * first..min(end, first + BLOCK)-1} and returns their sum, which the caller keeps so that the
   * loads are not dropped. Java has no prefetch instruction; a tight loop of independent loads puts
   * many of the next block's cache misses in flight at once (the score and softmax work between a
   * block's own loads would not), and that block then finds its rows in cache. A table row is 5
   * lines (its first float, every 16th and its last), a bfloat16 table row 3 (its first float and
   * every 16th); in the caller's arrays a value row is 5 lines at most, a key row 2. Written out,
   * not as a loop over lines: a loop with a running sum measured 2× slower than no loads ahead at
   * all.
   */
  final float prefetch(int first, int end) {
    int last = Math.min(end, first + BLOCK);
    float s = 0f;
    if (table != null && rowStride == PackedNodeTable.BFLOAT16_ROW) {
      float[] t = table;
      for (int e = first; e < last; e++) {
        int p = firstRow + csr.column(e) * rowStride;
        s += t[p] + t[p + 16] + t[p + 32];
      }
      return s;
    }
    if (table != null) {
      float[] t = table;
      int lastFloat = rowStride - 1;
      for (int e = first; e < last; e++) {
        int p = firstRow + csr.column(e) * rowStride;
        s += t[p] + t[p + 16] + t[p + 32] + t[p + 48] + t[p + lastFloat];
      }
      return s;
    }
    for (int e = first; e < last; e++) {
      int c = csr.column(e);
      int v = c * 64;
      int k = c * AllHeadsMath.HEADS;
      s +=
          value[v]
              + value[v + 16]
              + value[v + 32]
              + value[v + 48]
              + value[v + 63]
              + key[k]
              + key[k + 7];
    }
    return s;
  }
}
