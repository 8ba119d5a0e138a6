package dev.heed.sparse.internal;

import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.FastExp;

/**
 * The per-head path of the CSR kernel: any score function and head shape, over a CSR graph or the
 * complete pattern. Each block's scores are computed head-major into the scratch, and the block's
 * weighted value rows are added for all heads in one call ({@link PerHeadMath#weightedRowSums}).
 * One subclass per score function, chosen once per call by {@link #of}.
 *
 * <p>Dot-product scores are computed for the whole block at once ({@link PerHeadMath#dotScores}:
 * the vector form scores eight entries per vector operation), reading key rows in place, which
 * itself keeps eight rows' loads in flight: copying them into scratch first was slower (n = 2048,
 * 10 % density, 4 × 16: 1.35×; 262,144 nodes of 16 sources: 1.05×, busy machine). For additive and
 * GATv2 scores over a CSR graph, the block's key rows are gathered into scratch first, one vector
 * load and store per row, so that many cache misses are in flight before the scores need them
 * (R-MAT 1M nodes, 8 × 8 GATv2 scores: 1.5–1.8× faster than reading them in the scoring loop). For
 * 64-float key and value rows (8 heads × 8 dims, 4 × 16) of a large graph ({@link
 * #MIN_LOAD_AHEAD_BYTES}), the next row's first block is loaded ahead before the current row is
 * computed (1.2–1.4× on R-MAT 1M nodes).
 *
 * <p>Over a CSR graph, a dot-product row of at most {@link #ROW_ENTRIES} entries is computed whole
 * where the inner loops offer it for the head shape ({@link PerHeadMath#scoresWholeRows}: the
 * vector loops for 4 heads of 16 floats): scores held for the whole row, exact maxima, and one
 * weighted sum with no rescaling ({@link PerHeadMath#dotRow}; with the vector loops' other changes,
 * 1.66× the former blocks' speed at n = 2048, 10 % density). A row with an overflowing score is
 * then taken block by block.
 *
 * <p>Thread safety: as {@link CsrPass}.
 */
abstract class PerHeadPass extends CsrPass {

  /**
   * Key and value rows of at least this many bytes together are loaded ahead (when the variant asks
   * for it); smaller ones mostly stay in the core's caches, where the loads ahead only cost.
   * Measured with 64-float key and value rows, dot-product scores, 1 thread (busy machine), the
   * speed with loads ahead against without: 0.88-0.92× at 1 MiB, 0.9-0.98× at 8 MiB, 1.26-1.31× at
   * 128 MiB.
   */
  static final long MIN_LOAD_AHEAD_BYTES = 16L << 20;

  /** Rows of the complete pattern that take each block of sources together. */
  static final int TILE_ROWS = 4;

  /** The longest CSR row that a dot-product pass may compute whole ({@link Dot#wholeRow}). */
  static final int ROW_ENTRIES = 1024;

  final PerHeadMath math;

  /** Whether the next row's first block is loaded ahead (64-float rows of a large CSR graph). */
  private final boolean loadAhead;

  private PerHeadPass(CsrCall call, PerHeadMath math, boolean prefetch) {
    super(call, prefetch);
    this.math = math;
    this.loadAhead =
        prefetch
            && csr != null
            && valueWidth == 64
            && keyWidth == 64
            && (long) n * (keyWidth + valueWidth) * Float.BYTES >= MIN_LOAD_AHEAD_BYTES;
  }

  /**
   * Returns the pass for the call's score function.
   *
   * @param call the checked call
   * @param math the inner loops
   * @param prefetch whether rows of 64-float keys and values load the next row ahead
   * @return the pass
   */
  static PerHeadPass of(CsrCall call, PerHeadMath math, boolean prefetch) {
    ScoreFunction score = call.score();
    if (score instanceof ScoreFunction.Additive a) {
      return new Additive(call, math, prefetch, a.negativeSlope());
    }
    if (score instanceof ScoreFunction.Gatv2 g) {
      return new Gatv2(call, math, prefetch, g);
    }
    float scale = ((ScoreFunction.ScaledDotProduct) score).scale(call.shape().keyDim());
    return new Dot(call, math, prefetch, scale);
  }

  @Override
  final void rows(int from, int to, Scratch sc) {
    if (loadAhead) {
      for (int i = from; i < to; i++) {
        if (i + 1 < to) {
          sc.prefetchSink += prefetchWide(csr.rowStart(i + 1), csr.rowEnd(i + 1));
        }
        row(i, sc);
      }
      return;
    }
    if (csr == null) {
      completeRowTiles(from, to, sc);
      return;
    }
    for (int i = from; i < to; i++) {
      row(i, sc);
    }
  }

  /**
   * Loads one float from each of the (at most 5) cache lines of the key and value rows of entries
   * {@code first..min(end, first + BLOCK)-1} and returns their sum, which the caller keeps so that
   * the loads are not dropped (Java has no prefetch instruction).
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

  /** Row i block by block: scores, running maxima and sums, and the weighted value rows. */
  @Override
  final void sourcesRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    if (wholeRow(i, start, degree, firstEntry, sc)) {
      return;
    }
    beginRow(sc);
    for (int b = 0; b < degree; b += BLOCK) {
      int count = Math.min(BLOCK, degree - b);
      addBlock(i, blockColumns(start + b, count, sc), b, count, firstEntry, sc, false);
    }
    finishRow(i, degree, firstEntry, sc);
  }

  /**
   * Rows {@code from..to-1} of the complete pattern in tiles of {@link #TILE_ROWS} rows: each block
   * of sources is taken by every row of the tile in turn, while its key and value rows are still in
   * the core's first-level cache, instead of every row streaming all n key and value rows from the
   * second level. Each row keeps its own scratch, and its arithmetic is {@link #sourcesRow}'s in
   * the same order, so the bits do not change.
   */
  private void completeRowTiles(int from, int to, Scratch sc) {
    Scratch[] tile = sc.tileRows;
    if (tile == null) {
      tile = new Scratch[TILE_ROWS];
      tile[0] = sc;
      for (int r = 1; r < TILE_ROWS; r++) {
        tile[r] = newScratch();
      }
      sc.tileRows = tile;
    }
    for (int i0 = from; i0 < to; i0 += TILE_ROWS) {
      int rows = Math.min(TILE_ROWS, to - i0);
      for (int r = 0; r < rows; r++) {
        beginRow(tile[r]);
      }
      for (int b = 0; b < n; b += BLOCK) {
        int count = Math.min(BLOCK, n - b);
        int[] columns = blockColumns(b, count, sc);
        for (int r = 0; r < rows; r += 2) {
          int r2 = Math.min(r + 1, rows - 1);
          scoreBlockPair(i0 + r, i0 + r2, columns, count, tile[r], tile[r2]);
        }
        for (int r = 0; r < rows; r++) {
          addBlock(i0 + r, columns, b, count, (long) (i0 + r) * n, tile[r], true);
        }
      }
      for (int r = 0; r < rows; r++) {
        finishRow(i0 + r, n, (long) (i0 + r) * n, tile[r]);
      }
    }
  }

  /**
   * Adds entries {@code b..b+count-1} of row i (sources {@code columns[0..count-1]}) to the row's
   * running maxima, sums and accumulator in the scratch, scoring them first unless {@code scored}
   * (then the scratch already holds their scores).
   */
  private void addBlock(
      int i, int[] columns, int b, int count, long firstEntry, Scratch sc, boolean scored) {
    float[] s = sc.scores;
    float[] acc = sc.acc;
    float[] m = sc.max;
    float[] l = sc.sum;
    if (!scored) {
      scoreBlock(i, columns, count, sc);
    }
    if (weights != null) {
      for (int t = 0; t < count; t++) {
        int w = (int) ((firstEntry + b + t) * heads);
        for (int h = 0; h < heads; h++) {
          weights[w + h] = s[h * BLOCK + t];
        }
      }
    }
    // every head's block maximum first, then the exponentials: the maxima do not wait for each
    // other's exponentials, so their chains overlap
    float[] blockMaxima = sc.blockMax;
    for (int h = 0; h < heads; h++) {
      blockMaxima[h] = math.max(s, h * BLOCK, count);
    }
    for (int h = 0; h < heads; h++) {
      int sh = h * BLOCK;
      float blockMax = blockMaxima[h];
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
    math.weightedRowSums(s, BLOCK, rowBase, count, heads, valueDim, value, acc);
  }

  /**
   * Computes row i of a CSR graph in one piece when the pass can (see {@link Dot}), writing its
   * output and weights; returns false, having written nothing, when the row is to be taken block by
   * block instead.
   */
  boolean wholeRow(int i, int start, int degree, long firstEntry, Scratch sc) {
    return false;
  }

  /** Scores of the block's entries of row i, head-major into the scratch: head h's at h·BLOCK. */
  abstract void scoreBlock(int i, int[] columns, int count, Scratch sc);

  /**
   * {@link #scoreBlock} for rows i and i2 (the same row when {@code i2 == i}, with the same
   * scratch), into their own scratch; a pass may score both rows together.
   */
  void scoreBlockPair(int i, int i2, int[] columns, int count, Scratch sc, Scratch sc2) {
    scoreBlock(i, columns, count, sc);
    if (i2 != i) {
      scoreBlock(i2, columns, count, sc2);
    }
  }

  /**
   * Copies the key rows of the block's entries into scratch, row t at {@code t * keyWidth}. A loop
   * of loads alone keeps many cache misses in flight; the scoring loops then read the scratch.
   */
  final float[] gatherKeys(int[] columns, int count, Scratch sc) {
    math.gatherRows(key, keyWidth, columns, count, sc.keys);
    return sc.keys;
  }

  /** Additive (GAT) scores, Veličković et al. 2018, eq. 3: one key term per node and head. */
  static final class Additive extends PerHeadPass {
    private final float slope;

    Additive(CsrCall call, PerHeadMath math, boolean prefetch, float slope) {
      super(call, math, prefetch);
      this.slope = slope;
    }

    @Override
    void scoreBlock(int i, int[] columns, int count, Scratch sc) {
      float[] s = sc.scores;
      int qb = i * keyWidth;
      float[] gathered = gatherKeys(columns, count, sc);
      for (int t = 0; t < count; t++) {
        int gb = t * heads;
        for (int h = 0; h < heads; h++) {
          float z = query[qb + h] + gathered[gb + h];
          float e = Math.max(z, z * slope);
          s[h * BLOCK + t] = Float.isFinite(e) ? e : exactAdditiveScore(i, columns[t], h, slope);
        }
      }
    }
  }

  // GATv2 and dot products each keep their own scoring loop, though the loops differ in one line:
  // one shared loop calling a per-head score method took 15-20 % more CPU time per call in a JVM
  // that runs both (that call site sees two classes, in the innermost loop).

  /** GATv2 scores, Brody et al. 2022: the attention vector applied after the LeakyReLU. */
  static final class Gatv2 extends PerHeadPass {
    private final float slope;
    private final float[] attention;

    Gatv2(CsrCall call, PerHeadMath math, boolean prefetch, ScoreFunction.Gatv2 score) {
      super(call, math, prefetch);
      this.slope = score.negativeSlope();
      this.attention = score.attention();
    }

    @Override
    void scoreBlock(int i, int[] columns, int count, Scratch sc) {
      float[] s = sc.scores;
      int qb = i * keyWidth;
      boolean gather = csr != null;
      float[] keys = gather ? gatherKeys(columns, count, sc) : key;
      for (int t = 0; t < count; t++) {
        int j = columns[t];
        int kb = gather ? t * keyWidth : j * keyWidth;
        for (int h = 0; h < heads; h++) {
          int o = h * keyDim;
          float e = math.gatv2(attention, o, query, qb + o, keys, kb + o, keyDim, slope);
          s[h * BLOCK + t] = Float.isFinite(e) ? e : exactScore(i, j, h);
        }
      }
    }

    private float exactScore(int i, int j, int h) {
      int qo = i * keyWidth + h * keyDim;
      int ko = j * keyWidth + h * keyDim;
      double e = 0;
      for (int k = 0; k < keyDim; k++) {
        double q = query[qo + k];
        double kk = key[ko + k];
        e += attention[h * keyDim + k] * leakyRelu(q + kk, slope);
      }
      return clamp(e);
    }
  }

  /** Scaled dot-product scores, Vaswani et al. 2017, eq. 1. */
  static final class Dot extends PerHeadPass {
    private final float scale;

    /** The complete pattern's keys by dimension ({@link KeyColumns}); null over a CSR graph. */
    private final float[] keyColumns;

    /** Whether CSR rows of up to {@link #ROW_ENTRIES} entries are computed whole. */
    private final boolean wholeRows;

    Dot(CsrCall call, PerHeadMath math, boolean prefetch, float scale) {
      super(call, math, prefetch);
      this.scale = scale;
      this.keyColumns = csr == null ? KeyColumns.of(key, n, keyWidth) : null;
      this.wholeRows = csr != null && math.scoresWholeRows(heads, keyDim, valueDim);
    }

    /**
     * A row of at most {@link #ROW_ENTRIES} entries in one call of {@link PerHeadMath#dotRow}: its
     * scores held whole, exact maxima, and one loop of exponentials and weighted sums with no
     * rescaling. Rows with a score that overflows are taken block by block, which recomputes it.
     */
    @Override
    boolean wholeRow(int i, int start, int degree, long firstEntry, Scratch sc) {
      if (!wholeRows || degree > ROW_ENTRIES) {
        return false;
      }
      if (sc.rowSources == null || sc.rowSources.length < degree) {
        // sized by the rows met, so that small calls do not allocate for the longest row
        int entries = Math.min(ROW_ENTRIES, Math.max(2 * degree, 64));
        sc.rowSources = new int[entries];
        sc.rowWeights = new float[entries * heads + 8];
      }
      int[] rowBase = sc.rowSources;
      for (int t = 0; t < degree; t++) {
        rowBase[t] = csr.column(start + t) * keyWidth;
      }
      float[] w = sc.rowWeights;
      float[] l = sc.sum;
      if (!math.dotRow(
          query,
          i * keyWidth,
          key,
          value,
          rowBase,
          degree,
          heads,
          keyDim,
          valueDim,
          scale,
          w,
          l,
          out,
          i * valueWidth)) {
        return false;
      }
      if (weights != null) {
        for (int t = 0; t < degree; t++) {
          int wo = (int) ((firstEntry + t) * heads);
          for (int h = 0; h < heads; h++) {
            weights[wo + h] = w[t * heads + h] / l[h];
          }
        }
      }
      return true;
    }

    @Override
    void scoreBlock(int i, int[] columns, int count, Scratch sc) {
      if (keyColumns != null) {
        scoreBlockPair(i, i, columns, count, sc, sc);
        return;
      }
      float[] s = sc.scores;
      int[] rowBase = sc.rowBase;
      for (int t = 0; t < count; t++) {
        rowBase[t] = columns[t] * keyWidth;
      }
      if (!math.dotScores(
          query, i * keyWidth, key, rowBase, count, heads, keyDim, scale, s, BLOCK)) {
        recomputeNonFinite(i, columns, count, s);
      }
    }

    /**
     * Over the complete pattern, both rows' scores from the transposed keys, each load of keys
     * serving both rows ({@link PerHeadMath#dotScoresOfRuns}); over a CSR graph, one row after the
     * other.
     */
    @Override
    void scoreBlockPair(int i, int i2, int[] columns, int count, Scratch sc, Scratch sc2) {
      if (keyColumns == null) {
        super.scoreBlockPair(i, i2, columns, count, sc, sc2);
        return;
      }
      // the complete pattern: a block's sources are consecutive nodes
      if (!math.dotScoresOfRuns(
          query,
          i * keyWidth,
          i2 * keyWidth,
          keyColumns,
          n,
          columns[0],
          count,
          heads,
          keyDim,
          scale,
          sc.scores,
          sc2.scores,
          BLOCK)) {
        recomputeNonFinite(i, columns, count, sc.scores);
        recomputeNonFinite(i2, columns, count, sc2.scores);
      }
    }

    /** Replaces each non-finite score of row i's block by its clamped float64 value. */
    private void recomputeNonFinite(int i, int[] columns, int count, float[] s) {
      for (int t = 0; t < count; t++) {
        for (int h = 0; h < heads; h++) {
          if (!Float.isFinite(s[h * BLOCK + t])) {
            s[h * BLOCK + t] = exactScore(i, columns[t], h);
          }
        }
      }
    }

    private float exactScore(int i, int j, int h) {
      int qo = i * keyWidth + h * keyDim;
      int ko = j * keyWidth + h * keyDim;
      double e = 0;
      for (int k = 0; k < keyDim; k++) {
        e += (double) query[qo + k] * key[ko + k];
      }
      return clamp(e * scale);
    }
  }
}
