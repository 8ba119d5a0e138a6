package dev.heed.sparse;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.FastExp;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.sparse.internal.RowMath;
import java.util.Arrays;

/**
 * One validated call of the CSR kernel: the fused per-row pass (scores, softmax, weighted sum) over
 * a range of target rows. Internal; the kernel has already checked every argument, so this class
 * only asserts.
 *
 * <p>Per row, entries are taken in blocks of {@link #BLOCK}: the block's scores for every head go
 * into a small head-major scratch, each head's running maximum and running sum are updated with the
 * block maximum (online normalisation, Milakov &amp; Gimelshein 2018, applied per block), and the
 * block's values are added into a per-thread accumulator row scaled by their unnormalised weights.
 * No array of E×H scores is ever formed unless the caller asks for weights. The arithmetic of a row
 * depends only on that row, so results do not depend on how rows are split between threads.
 *
 * <p>For additive (GAT) scores with {@link RowMath#ALL_HEADS} heads of {@link RowMath#ALL_HEADS}
 * value floats (one 256-byte value row per node), the block is instead processed with all heads at
 * once: scores edge-major (one vector per entry), one running maximum and sum vector, and one pass
 * over the block's value rows that reads each row once ({@link RowMath#additiveScoresAllHeads},
 * {@link RowMath#softmaxAccumulateAllHeads}). The general path reads the block's value rows once
 * per head.
 *
 * <p>Key rows are gathered into scratch first, one vector load and store per row, so that many
 * cache misses are in flight before the scores need them; on the all-heads path consecutive short
 * rows share one gather loop, and the key and value rows of the next group (or of a long row's next
 * block) are loaded ahead, one float per cache line, before the current one is computed ({@link
 * #prefetch}); on the per-head path, rows of 64-float keys and values load the next row's first
 * block ahead the same way. Over the complete pattern the keys are consecutive rows already and are
 * read in place. On the all-heads path over a large CSR graph the kernel may hand the pass a packed
 * node table ({@link PackedNodeTable}: each node's key terms and value row together, 5 cache lines
 * instead of up to 7 in two places). By default the table holds factored weights instead of key
 * terms (below); in its exact layout ({@code -Dheed.sparse.factor=false}) the pass reads keys and
 * values from it, scores the keys in place instead of gathering them, and computes exactly the same
 * operations as without the table.
 *
 * <p><b>Factored weights.</b> When the kernel hands the pass a node table in its factored layout,
 * the all-heads rows skip the per-entry exponential and the row maximum. With K the largest key
 * term of a head over all nodes and {@code z = q_i + K}, every score {@code LeakyReLU(q_i + k_j)}
 * of row i is at most {@code m_i = LeakyReLU(z)}, and {@code exp(LeakyReLU(q_i + k_j) - m_i)} is
 * {@code exp(k_j - K)} where {@code q_i + k_j >= 0} and {@code exp(slope · (k_j - K)) · exp(-(1 -
 * slope) · max(z, 0))} elsewhere (Veličković et al. 2018, eq. 3, and {@code exp(a + b) = exp(a) ·
 * exp(b)}; LeakyReLU is linear on each side of 0). So the table stores the two per-node factors in
 * place of the key terms (same five cache lines per node), each row computes one per-row factor,
 * and each entry costs a compare, a multiply and a blend instead of a score, a maximum and an
 * exponential: 1.2× faster for the whole layer at 1M nodes (benchmarks/results/sparse-kernel.md,
 * "Sixth window"). The weights are relative to the bound rather than the row's own maximum, so a
 * row whose scores all lie more than about 41 below its bound (a head's sum under {@link
 * RowMath#FACTORED_MIN_SUM}) is recomputed with the exact online softmax above, keys read from the
 * caller's array. Outputs agree with the exact path to within rounding (the float difference {@code
 * k_j - K} is rounded once, as {@code q_i + k_j} is on the exact path), not bit for bit; they are
 * still identical for any thread count and whether or not weights are asked for (those written are
 * each entry's factored weight over its head's sum). Where q + k itself loses the key's digits to
 * rounding (inputs near {@link Float#MAX_VALUE}), the factored weights keep them and the two paths
 * can differ by more; both stay finite convex combinations.
 *
 * <p>Scores that overflow float32 (only possible with inputs near {@link Float#MAX_VALUE}) are
 * recomputed in float64 and clamped to ±{@link Float#MAX_VALUE}, so no NaN or infinity reaches the
 * softmax.
 *
 * <p>Thread safety: immutable after construction except for the caller's output arrays; each thread
 * passes its own {@link Scratch} and writes disjoint rows.
 */
final class CsrRowPass {

  /** Entries per softmax block: scratch is {@code BLOCK × heads} floats. */
  static final int BLOCK = 128;

  /**
   * Whether the next block's key and value rows are loaded ahead (see {@link #prefetch}); {@code
   * -Dheed.sparse.prefetch=false} turns it off, for measurements.
   */
  static final boolean PREFETCH =
      Boolean.parseBoolean(System.getProperty("heed.sparse.prefetch", "true"));

  private static final int ADDITIVE = 0;
  private static final int GATV2 = 1;
  private static final int DOT = 2;

  private final RowMath math;
  private final CsrGraph csr; // null for the complete pattern
  private final int n;
  private final int kind;
  private final float slope;
  private final float dotScale;
  private final float[] attention; // GATv2 only
  private final int heads;
  private final int keyDim;
  private final int valueDim;
  private final int keyWidth;
  private final int valueWidth;
  private final float[] query;
  private final float[] key;
  private final float[] value;
  private final float[] out;
  private final float[] weights;
  private final boolean allHeads;
  private final boolean gatherWideKeys;
  private final float[] table; // the packed node table, or null
  private final float[] valueRows; // table, or value
  private final float[] keyMax; // per head, the largest key term: the factored table's K, or null
  private final boolean factored;

  /** A pass without the packed node table. */
  CsrRowPass(
      RowMath math,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights,
      boolean allHeadsAllowed) {
    this(math, pattern, score, shape, query, key, value, out, weights, allHeadsAllowed, null);
  }

  /**
   * Creates the pass; {@code table}, if not null, is the packed node table ({@link
   * PackedNodeTable}) that the all-heads path reads keys and values from once {@link #pack} has
   * filled it for every node; it requires {@link #allHeadsOverCsr}.
   */
  CsrRowPass(
      RowMath math,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights,
      boolean allHeadsAllowed,
      float[] table) {
    this(
        math, pattern, score, shape, query, key, value, out, weights, allHeadsAllowed, table, null);
  }

  /**
   * Creates the pass; {@code keyMax}, if not null, selects the factored layout of the node table
   * (see the class comment) and holds each head's largest key term over all nodes; it requires a
   * table and no weights.
   */
  CsrRowPass(
      RowMath math,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights,
      boolean allHeadsAllowed,
      float[] table,
      float[] keyMax) {
    this.math = math;
    this.csr = pattern instanceof CsrGraph g ? g : null;
    assert csr != null || pattern instanceof CompletePattern;
    this.n = pattern.nodeCount();
    if (score instanceof ScoreFunction.Additive a) {
      kind = ADDITIVE;
      slope = a.negativeSlope();
      attention = null;
      dotScale = 1f;
    } else if (score instanceof ScoreFunction.Gatv2 g) {
      kind = GATV2;
      slope = g.negativeSlope();
      attention = g.attention();
      dotScale = 1f;
    } else {
      kind = DOT;
      slope = 0f;
      attention = null;
      dotScale = ((ScoreFunction.ScaledDotProduct) score).scale(shape.keyDim());
    }
    this.heads = shape.heads();
    this.keyDim = shape.keyDim();
    this.valueDim = shape.valueDim();
    this.keyWidth = shape.keyWidth();
    this.valueWidth = shape.valueWidth();
    this.query = query;
    this.key = key;
    this.value = value;
    this.out = out;
    this.weights = weights;
    // Over a CSR graph the block's key rows are gathered first (many misses in flight at once;
    // measured on R-MAT 1M, 8 x 8 dot and GATv2 scores: 1.5-1.8x faster than reading them in the
    // scoring loop). Over the complete pattern they are consecutive rows already, and copying
    // them only costs (n = 4096, 8 x 64 dot: 1.25x slower with the copy).
    this.gatherWideKeys = csr != null;
    this.allHeads = allHeadsApplies(math, score, shape, allHeadsAllowed);
    assert table == null || (allHeads && csr != null);
    this.table = table;
    this.valueRows = table == null ? value : table;
    this.keyMax = keyMax;
    this.factored = keyMax != null;
    assert !factored || table != null;
  }

  /** Whether a pass with these arguments takes the all-heads path (see the class comment). */
  static boolean allHeadsApplies(
      RowMath math, ScoreFunction score, HeadShape shape, boolean allHeadsAllowed) {
    return allHeadsAllowed
        && score instanceof ScoreFunction.Additive
        && shape.heads() == RowMath.ALL_HEADS
        && shape.valueDim() == RowMath.ALL_HEADS
        && math.servesAllHeads();
  }

  /**
   * Whether a pass with these arguments takes the all-heads path over a CSR graph, the only one
   * that reads the packed node table.
   */
  static boolean allHeadsOverCsr(
      RowMath math,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      boolean allHeadsAllowed) {
    return pattern instanceof CsrGraph && allHeadsApplies(math, score, shape, allHeadsAllowed);
  }

  /**
   * Copies the key terms and value rows of nodes {@code from..to-1} into the packed node table.
   *
   * @return true if every float copied is finite
   */
  boolean pack(int from, int to) {
    assert table != null;
    if (factored) {
      return math.packFactored(
          key, value, from, to, keyMax, slope, table, PackedNodeTable.FACTORED_OFFSET);
    }
    return math.packAllHeads(key, value, from, to, table, PackedNodeTable.OFFSET);
  }

  /** Start of node c's value row in {@link #valueRows}. */
  private int valueRow(int c) {
    if (factored) {
      return PackedNodeTable.factoredValueRow(c);
    }
    return table == null ? c * valueWidth : PackedNodeTable.valueRow(c);
  }

  /** Returns whether rows take the all-heads path (see the class comment). */
  boolean allHeads() {
    return allHeads;
  }

  /** Per-thread work arrays, sized once per call. */
  static final class Scratch {
    final float[] scores;
    final float[] acc;
    final float[] max;
    final float[] sum;
    final int[] columns;
    final int[] rowBase;
    final float[] keys;
    final float[] work;

    /** Sum of the prefetch loads; kept so that the JIT cannot drop them. */
    float prefetchSink;

    Scratch(int heads, int keyWidth, int valueWidth) {
      work = new float[RowMath.ALL_HEADS];
      columns = new int[BLOCK];
      rowBase = new int[BLOCK];
      keys = new float[BLOCK * keyWidth];
      // one row more: the factored row method keeps its sums there
      scores = new float[(BLOCK + 1) * heads];
      acc = new float[valueWidth];
      max = new float[heads];
      sum = new float[heads];
    }
  }

  Scratch newScratch() {
    return new Scratch(heads, keyWidth, valueWidth);
  }

  /**
   * Where each run leaves the sum of its loads ahead: a store the JIT must keep, so that it cannot
   * drop those loads even if it proves that the scratch never escapes. Never read.
   */
  @SuppressWarnings("unused")
  private static volatile float prefetchSink;

  /** Computes rows {@code from..to-1}. */
  void run(int from, int to, Scratch sc) {
    runRows(from, to, sc);
    prefetchSink = sc.prefetchSink;
  }

  private void runRows(int from, int to, Scratch sc) {
    if (allHeads && csr != null) {
      runGrouped(from, to, sc);
      return;
    }
    if (PREFETCH && csr != null && valueWidth == 64 && keyWidth == 64) {
      // per-head path with 64-float key and value rows (GATv2 and dot-product scores, 8 heads x 8
      // dims): the next row's first block is loaded ahead (1.2-1.4x measured on R-MAT 1M)
      for (int i = from; i < to; i++) {
        if (i + 1 < to) {
          sc.prefetchSink += prefetchWide(csr.rowStart(i + 1), csr.rowEnd(i + 1));
        }
        row(i, sc);
      }
      return;
    }
    for (int i = from; i < to; i++) {
      row(i, sc);
    }
  }

  /**
   * {@link #prefetch} for the per-head path with 64-float key and value rows: one float from each
   * of the (at most 5) cache lines of both rows of entries {@code first..min(end, first +
   * BLOCK)-1}.
   */
  private float prefetchWide(int first, int end) {
    assert valueWidth == 64 && keyWidth == 64;
    int last = Math.min(end, first + BLOCK);
    float s = 0f;
    for (int e = first; e < last; e++) {
      int r = csr.column(e) * 64;
      s +=
          value[r]
              + value[r + 16]
              + value[r + 32]
              + value[r + 48]
              + value[r + 63]
              + key[r]
              + key[r + 16]
              + key[r + 32]
              + key[r + 48]
              + key[r + 63];
    }
    return s;
  }

  /**
   * The all-heads path over a CSR graph: consecutive rows of 1 to {@link #BLOCK} entries are taken
   * in groups of at most {@link #BLOCK} entries in all, whose key rows are gathered in one loop (on
   * power-law graphs most rows are short, and a row's own few key loads leave the memory system
   * idle); then each row of the group runs exactly the operations {@link #row} would, so results do
   * not depend on the grouping, nor on how rows are split between threads. Before a group is
   * computed, the next group's rows are loaded ahead ({@link #prefetch}); that only warms the
   * cache.
   */
  private void runGrouped(int from, int to, Scratch sc) {
    int i = from;
    int j = groupEnd(from, to);
    if (PREFETCH) {
      sc.prefetchSink += prefetch(csr.rowStart(i), csr.rowStart(j));
    }
    while (i < to) {
      int next = j < to ? groupEnd(j, to) : j;
      if (PREFETCH && next > j) {
        sc.prefetchSink += prefetch(csr.rowStart(j), csr.rowStart(next));
      }
      int start = csr.rowStart(i);
      int degree = csr.rowEnd(i) - start;
      if (j == i + 1 && (degree == 0 || degree > BLOCK)) {
        row(i, sc);
      } else {
        int count = csr.rowEnd(j - 1) - start;
        int[] columns = blockColumns(start, count, sc);
        float[] keys = table == null ? gatherKeys(columns, count, sc) : null;
        for (int r = i; r < j; r++) {
          int rowStart = csr.rowStart(r);
          allHeadsRow(r, columns, keys, rowStart - start, csr.rowEnd(r) - rowStart, rowStart, sc);
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

  /**
   * Loads one float from every 64-byte cache line of the key and value rows of entries {@code
   * first..min(end, first + BLOCK)-1} and returns their sum, which the caller keeps so that the
   * loads are not dropped. Java has no prefetch instruction; a tight loop of independent loads puts
   * many of the next block's cache misses in flight at once (the score and softmax work between a
   * block's own loads would not), and that block's scores and weighted sum then find their rows in
   * cache. All-heads path only: value rows of 64 floats (5 lines at most, however the array is
   * aligned) and key rows of 8 (2 lines at most). Written out, not as a loop over lines: a loop
   * with a running sum measured 2x slower than no prefetch at all.
   */
  private float prefetch(int first, int end) {
    assert allHeads && valueWidth == 64 && keyWidth == RowMath.ALL_HEADS;
    int last = Math.min(end, first + BLOCK);
    float s = 0f;
    if (factored) {
      // a factored row is 320 bytes on a 64-byte boundary: 5 whole cache lines
      float[] t = table;
      for (int e = first; e < last; e++) {
        int p = PackedNodeTable.factoredValueRow(csr.column(e)) - 2 * RowMath.ALL_HEADS;
        s += t[p] + t[p + 16] + t[p + 32] + t[p + 48] + t[p + 64];
      }
      return s;
    }
    if (table != null) {
      // a packed row is 288 bytes that start on a 32-byte boundary: 5 cache lines
      float[] t = table;
      for (int e = first; e < last; e++) {
        int p = PackedNodeTable.valueRow(csr.column(e)) - RowMath.ALL_HEADS;
        s += t[p] + t[p + 16] + t[p + 32] + t[p + 48] + t[p + RowMath.PACKED_ROW - 1];
      }
      return s;
    }
    for (int e = first; e < last; e++) {
      int c = csr.column(e);
      int v = c * 64;
      int k = c * RowMath.ALL_HEADS;
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

  private void row(int i, Scratch sc) {
    int start = csr == null ? 0 : csr.rowStart(i);
    int degree = csr == null ? n : csr.rowEnd(i) - start;
    if (degree == 0) {
      int outBase = i * valueWidth;
      Arrays.fill(out, outBase, outBase + valueWidth, 0f);
      return;
    }
    long firstEntry = csr == null ? (long) i * n : start;
    if (allHeads && degree <= BLOCK) {
      int[] columns = blockColumns(start, degree, sc);
      float[] keys = table == null ? gatherKeys(columns, degree, sc) : null;
      allHeadsRow(i, columns, keys, 0, degree, firstEntry, sc);
      return;
    }
    if (factored) {
      factoredLongRow(i, start, degree, sc);
      return;
    }
    beginRow(sc);
    if (allHeads) {
      for (int b = 0; b < degree; b += BLOCK) {
        int count = Math.min(BLOCK, degree - b);
        int[] columns = blockColumns(start + b, count, sc);
        float[] keys = table == null ? gatherKeys(columns, count, sc) : null;
        if (PREFETCH && csr != null && b + BLOCK < degree) {
          sc.prefetchSink += prefetch(start + b + BLOCK, start + degree);
        }
        allHeadsBlock(i, columns, keys, 0, count, firstEntry + b, sc);
      }
    } else {
      perHeadBlocks(i, start, degree, firstEntry, sc);
    }
    finishRow(i, degree, firstEntry, sc);
  }

  private static void beginRow(Scratch sc) {
    Arrays.fill(sc.acc, 0f);
    Arrays.fill(sc.max, Float.NEGATIVE_INFINITY);
    Arrays.fill(sc.sum, 0f);
  }

  /** Writes row i's output (and weights) from the running sums of its last block. */
  private void finishRow(int i, int degree, long firstEntry, Scratch sc) {
    int outBase = i * valueWidth;
    float[] acc = sc.acc;
    float[] m = sc.max;
    float[] l = sc.sum;
    for (int h = 0; h < heads; h++) {
      float total = l[h];
      assert total >= 1f : "the row maximum contributes exactly 1";
      for (int k = h * valueDim, end = k + valueDim; k < end; k++) {
        out[outBase + k] = acc[k] / total;
      }
    }
    if (weights != null) {
      normaliseWeights(degree, firstEntry, sc);
    }
  }

  /** Turns row scores in the weights array into weights, with the row's final maxima and sums. */
  private void normaliseWeights(int degree, long firstEntry, Scratch sc) {
    float[] m = sc.max;
    float[] l = sc.sum;
    for (int t = 0; t < degree; t++) {
      int w = (int) ((firstEntry + t) * heads);
      for (int h = 0; h < heads; h++) {
        weights[w + h] = FastExp.expNonPositive(weights[w + h] - m[h]) / l[h];
      }
    }
  }

  /**
   * A whole row of at most {@link #BLOCK} entries on the all-heads path, with the same arguments as
   * {@link #allHeadsBlock}: the same operations as {@link #beginRow}, one block and {@link
   * #finishRow}, in one call that keeps the accumulator in registers. A row of one entry is {@link
   * RowMath#singleEntryRowAllHeads}: the same output bits, and a weight of exactly 1 per head.
   */
  private void allHeadsRow(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    if (count == 1) {
      // the same output bits for any finite score (every score here is: non-finite ones are
      // recomputed, clamped), so the score, exponential and division are skipped; the weight of
      // a lone entry is exp(0) / 1 = 1 exactly
      math.singleEntryRowAllHeads(valueRows, valueRow(columns[offset]), out, i * valueWidth);
      if (weights != null) {
        int w = (int) (firstEntry * heads);
        Arrays.fill(weights, w, w + heads, 1f);
      }
      return;
    }
    if (factored) {
      int[] rowBase = sc.rowBase;
      for (int t = 0; t < count; t++) {
        rowBase[t] = valueRow(columns[offset + t]);
      }
      if (!math.factoredRowAllHeads(
          query,
          i * keyWidth,
          keyMax,
          slope,
          table,
          rowBase,
          count,
          sc.scores,
          out,
          i * valueWidth)) {
        exactRow(i, sc);
      } else if (weights != null) {
        // the row method leaves the weights relative to the bound in the scratch, their sums after
        int w = (int) (firstEntry * heads);
        int sums = count * heads;
        for (int t = 0; t < sums; t += heads) {
          for (int h = 0; h < heads; h++) {
            weights[w + t + h] = sc.scores[t + h] / sc.scores[sums + h];
          }
        }
      }
      return;
    }
    float[] s = allHeadsScores(i, columns, keys, offset, count, firstEntry, sc);
    math.softmaxRowAllHeads(
        s, count, sc.max, sc.sum, sc.rowBase, valueRows, sc.acc, sc.work, out, i * valueWidth);
    if (weights != null) {
      normaliseWeights(count, firstEntry, sc);
    }
  }

  /** The blocks of row i on the per-head path: any score and shape. */
  private void perHeadBlocks(int i, int start, int degree, long firstEntry, Scratch sc) {
    float[] s = sc.scores;
    float[] acc = sc.acc;
    float[] m = sc.max;
    float[] l = sc.sum;
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      int[] columns = blockColumns(start + b, count, sc);
      scoreBlock(i, columns, count, sc);
      if (weights != null) {
        for (int t = 0; t < count; t++) {
          int w = (int) ((firstEntry + b + t) * heads);
          for (int h = 0; h < heads; h++) {
            weights[w + h] = s[h * BLOCK + t];
          }
        }
      }
      for (int h = 0; h < heads; h++) {
        int sh = h * BLOCK;
        float blockMax = math.max(s, sh, count);
        float old = m[h];
        if (blockMax > old) {
          if (old != Float.NEGATIVE_INFINITY) {
            float f = FastExp.expNonPositive(old - blockMax);
            l[h] *= f;
            math.scale(acc, h * valueDim, valueDim, f);
          }
          m[h] = blockMax;
        }
        l[h] += math.expShiftSum(s, sh, count, m[h]);
      }
      int[] rowBase = sc.rowBase;
      for (int t = 0; t < count; t++) {
        rowBase[t] = columns[t] * valueWidth;
      }
      for (int h = 0; h < heads; h++) {
        math.weightedRowSum(
            s, h * BLOCK, rowBase, count, h * valueDim, value, acc, h * valueDim, valueDim);
      }
    }
  }

  /**
   * One block of row i on the all-heads path (additive scores, 8 heads of 8 value floats): its
   * {@code count} entries have their columns at {@code columns[offset..]} and their key rows at
   * {@code keys[offset·8..]}; {@code firstEntry} is the CSR index of the block's first entry.
   */
  private void allHeadsBlock(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    float[] s = allHeadsScores(i, columns, keys, offset, count, firstEntry, sc);
    math.softmaxAccumulateAllHeads(
        s, count, sc.max, sc.sum, sc.rowBase, valueRows, sc.acc, sc.work);
  }

  /**
   * The block's scores, edge-major into the scratch (and into the weights array if asked for), and
   * the start of each entry's value row into {@code sc.rowBase}.
   */
  private float[] allHeadsScores(
      int i, int[] columns, float[] keys, int offset, int count, long firstEntry, Scratch sc) {
    float[] s = sc.scores;
    int qb = i * keyWidth;
    int[] rowBase = sc.rowBase;
    for (int t = 0; t < count; t++) {
      rowBase[t] = valueRow(columns[offset + t]);
    }
    // keys gathered from the caller's array, or (exact layout of the table) read in place
    boolean finite =
        keys != null
            ? math.additiveScoresAllHeads(query, qb, keys, offset * keyWidth, count, slope, s)
            : math.additiveScoresAllHeadsPacked(query, qb, table, rowBase, count, slope, s);
    if (!finite) {
      for (int t = 0; t < count; t++) {
        for (int h = 0; h < heads; h++) {
          if (!Float.isFinite(s[t * heads + h])) {
            s[t * heads + h] = exactScore(i, columns[offset + t], h);
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

  /** The source node of entries {@code first..first+count-1}, into the scratch. */
  private int[] blockColumns(int first, int count, Scratch sc) {
    int[] columns = sc.columns;
    if (csr == null) {
      for (int t = 0; t < count; t++) {
        columns[t] = first + t;
      }
    } else {
      for (int t = 0; t < count; t++) {
        columns[t] = csr.column(first + t);
      }
    }
    return columns;
  }

  /** Scores of the block's entries of row i, head-major into the scratch. */
  private void scoreBlock(int i, int[] columns, int count, Scratch sc) {
    float[] s = sc.scores;
    int qb = i * keyWidth;
    switch (kind) {
      case ADDITIVE -> {
        float[] gathered = gatherKeys(columns, count, sc);
        for (int t = 0; t < count; t++) {
          int gb = t * heads;
          for (int h = 0; h < heads; h++) {
            float z = query[qb + h] + gathered[gb + h];
            float e = Math.max(z, z * slope);
            s[h * BLOCK + t] = Float.isFinite(e) ? e : exactScore(i, columns[t], h);
          }
        }
      }
      case GATV2 -> {
        float[] gathered = gatherWideKeys ? gatherKeys(columns, count, sc) : key;
        for (int t = 0; t < count; t++) {
          int j = columns[t];
          int kb = gatherWideKeys ? t * keyWidth : j * keyWidth;
          for (int h = 0; h < heads; h++) {
            int o = h * keyDim;
            float e = math.gatv2(attention, o, query, qb + o, gathered, kb + o, keyDim, slope);
            s[h * BLOCK + t] = Float.isFinite(e) ? e : exactScore(i, j, h);
          }
        }
      }
      default -> {
        float[] gathered = gatherWideKeys ? gatherKeys(columns, count, sc) : key;
        for (int t = 0; t < count; t++) {
          int j = columns[t];
          int kb = gatherWideKeys ? t * keyWidth : j * keyWidth;
          for (int h = 0; h < heads; h++) {
            int o = h * keyDim;
            float e = math.dot(query, qb + o, gathered, kb + o, keyDim) * dotScale;
            s[h * BLOCK + t] = Float.isFinite(e) ? e : exactScore(i, j, h);
          }
        }
      }
    }
  }

  /**
   * Copies the key rows of the block's entries into scratch, row t at {@code t * keyWidth}. A loop
   * of loads alone keeps many cache misses in flight; the scoring loops then read the scratch
   * (measured: with the random key loads inside the scoring loop, they were its hottest spot).
   */
  private float[] gatherKeys(int[] columns, int count, Scratch sc) {
    math.gatherRows(key, keyWidth, columns, count, sc.keys);
    return sc.keys;
  }

  /** The score in float64, clamped to the float range; the rare path after a float overflow. */
  private float exactScore(int i, int j, int h) {
    int qo = i * keyWidth + h * keyDim;
    int ko = j * keyWidth + h * keyDim;
    double e = 0;
    for (int k = 0; k < keyDim; k++) {
      double q = query[qo + k];
      double kk = key[ko + k];
      switch (kind) {
        case ADDITIVE -> e = leakyRelu(q + kk);
        case GATV2 -> e += attention[h * keyDim + k] * leakyRelu(q + kk);
        default -> e += q * kk;
      }
    }
    if (kind == DOT) {
      e *= dotScale;
    }
    return (float) Math.max(-Float.MAX_VALUE, Math.min(Float.MAX_VALUE, e));
  }

  private double leakyRelu(double z) {
    return z > 0 ? z : slope * z;
  }

  /**
   * A row of more than {@link #BLOCK} entries with factored weights: block by block, each block's
   * rows loaded ahead as on the exact path; the sums and the accumulator just add up (the bound
   * does not move), and the row is recomputed exactly if a head's sum is too small.
   */
  private void factoredLongRow(int i, int start, int degree, Scratch sc) {
    Arrays.fill(sc.acc, 0f);
    Arrays.fill(sc.sum, 0f);
    int[] rowBase = sc.rowBase;
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      for (int t = 0; t < count; t++) {
        rowBase[t] = valueRow(csr.column(start + b + t));
      }
      if (PREFETCH && b + BLOCK < degree) {
        sc.prefetchSink += prefetch(start + b + BLOCK, start + degree);
      }
      math.factoredBlockAllHeads(
          query, i * keyWidth, keyMax, slope, table, rowBase, count, sc.scores, sc.sum, sc.acc);
      if (weights != null) {
        System.arraycopy(sc.scores, 0, weights, (start + b) * heads, count * heads);
      }
    }
    for (int h = 0; h < heads; h++) {
      if (!(sc.sum[h] >= RowMath.FACTORED_MIN_SUM)) {
        exactRow(i, sc);
        return;
      }
    }
    if (weights != null) {
      for (int w = start * heads, end = (start + degree) * heads; w < end; w += heads) {
        for (int h = 0; h < heads; h++) {
          weights[w + h] /= sc.sum[h];
        }
      }
    }
    int outBase = i * valueWidth;
    for (int h = 0; h < heads; h++) {
      float total = sc.sum[h];
      for (int k = h * valueDim, end = k + valueDim; k < end; k++) {
        out[outBase + k] = sc.acc[k] / total;
      }
    }
  }

  /**
   * Row i by the exact online softmax (running maxima), its key terms read from the caller's array
   * and its values from the factored table: for the rare rows whose factored weights are too small
   * to keep their precision ({@link RowMath#FACTORED_MIN_SUM}).
   */
  private void exactRow(int i, Scratch sc) {
    int start = csr.rowStart(i);
    int degree = csr.rowEnd(i) - start;
    beginRow(sc);
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      int[] columns = blockColumns(start + b, count, sc);
      allHeadsBlock(i, columns, gatherKeys(columns, count, sc), 0, count, start + b, sc);
    }
    finishRow(i, degree, start, sc);
  }
}
