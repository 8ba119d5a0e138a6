package dev.heed.sparse.internal;

import dev.heed.attention.HeadShape;
import dev.heed.attention.internal.FastExp;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;

/**
 * One validated call of the CSR kernel, computing a range of target rows with a fused pass per row
 * (scores, softmax, weighted sum). The kernel chooses one subclass per call: {@link PerHeadPass}
 * (any score and shape), {@link ExactAllHeadsPass} (additive scores with 8 heads of 8 value floats)
 * or {@link FactoredAllHeadsPass} (the same over a factored packed node table). Internal; the
 * kernel has already checked every argument, so passes only assert.
 *
 * <p>Per row, entries are taken in blocks of {@link #BLOCK}: the block's scores go into a small
 * scratch, each head's running maximum and running sum are updated with the block maximum (online
 * normalisation, Milakov &amp; Gimelshein 2018, applied per block), and the block's values are
 * added into a per-thread accumulator row scaled by their unnormalised weights (a pass may compute
 * a short row whole instead, with exact maxima: see {@link PerHeadPass}). No array of E×H scores is
 * ever formed unless the caller asks for weights. The arithmetic of a row depends only on that row,
 * so results do not depend on how rows are split between threads.
 *
 * <p>Scores that overflow float32 (only possible with inputs near {@link Float#MAX_VALUE}) are
 * recomputed in float64 and clamped to ±{@link Float#MAX_VALUE}, so no NaN or infinity reaches the
 * softmax.
 *
 * <p>Thread safety: immutable after construction except for the caller's output arrays; each thread
 * passes its own {@link Scratch} and writes disjoint rows.
 */
abstract class CsrPass {

  /** Entries per softmax block: scratch is {@code BLOCK × heads} floats. */
  static final int BLOCK = 128;

  /**
   * Where each run leaves the sum of its loads ahead: a store the JIT must keep, so that it cannot
   * drop those loads even if it proves that the scratch never escapes. Never read.
   */
  @SuppressWarnings("unused")
  private static volatile float prefetchSink;

  final CsrGraph csr; // null for the complete pattern
  final int n;
  final int heads;
  final int keyDim;
  final int valueDim;
  final int keyWidth;
  final int valueWidth;
  final float[] query;
  final float[] key;
  final float[] value;
  final float[] out;
  final float[] weights;

  /** Whether rows of the next block or group are loaded ahead (see the subclasses). */
  final boolean prefetch;

  CsrPass(CsrCall call, boolean prefetch) {
    this.csr = call.pattern() instanceof CsrGraph g ? g : null;
    assert csr != null || call.pattern() instanceof CompletePattern;
    this.n = call.pattern().nodeCount();
    HeadShape shape = call.shape();
    this.heads = shape.heads();
    this.keyDim = shape.keyDim();
    this.valueDim = shape.valueDim();
    this.keyWidth = shape.keyWidth();
    this.valueWidth = shape.valueWidth();
    this.query = call.query();
    this.key = call.key();
    this.value = call.value();
    this.out = call.out();
    this.weights = call.weights();
    this.prefetch = prefetch;
  }

  /** Per-thread work arrays, sized once per call. */
  static final class Scratch {
    final float[] scores;
    final float[] acc;
    final float[] max;
    final float[] sum;

    /** Each head's maximum over the current block (per-head path). */
    final float[] blockMax;

    final int[] columns;
    final int[] rowBase;
    final float[] keys;
    final float[] work;

    /** Sum of the prefetch loads; kept so that the JIT cannot drop them. */
    float prefetchSink;

    /**
     * The scratch of each row of a tile of rows computed together, this one first; created by the
     * first tile of the thread's call and kept for its later chunks (see {@link PerHeadPass}).
     */
    Scratch[] tileRows;

    /** Key row starts of a row computed whole; created, or replaced by a longer one, as needed. */
    int[] rowSources;

    /** Weights of a row computed whole, entry-major; created with {@link #rowSources}. */
    float[] rowWeights;

    Scratch(int heads, int keyWidth, int valueWidth) {
      work = new float[AllHeadsMath.HEADS];
      columns = new int[BLOCK];
      rowBase = new int[BLOCK];
      keys = new float[BLOCK * keyWidth];
      // one row more: the factored row method keeps its sums there
      scores = new float[(BLOCK + 1) * heads];
      acc = new float[valueWidth];
      max = new float[heads];
      sum = new float[heads];
      blockMax = new float[heads];
    }
  }

  /** Returns new work arrays for one thread of this call. */
  final Scratch newScratch() {
    return new Scratch(heads, keyWidth, valueWidth);
  }

  /** Computes rows {@code from..to-1}. */
  final void run(int from, int to, Scratch sc) {
    rows(from, to, sc);
    prefetchSink = sc.prefetchSink;
  }

  /** Computes rows {@code from..to-1}, adding the sum of any loads ahead to the scratch. */
  abstract void rows(int from, int to, Scratch sc);

  /** The source node of entries {@code first..first+count-1}, into the scratch. */
  final int[] blockColumns(int first, int count, Scratch sc) {
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

  /** Computes row i on its own: zeros for a node without sources, else {@link #sourcesRow}. */
  final void row(int i, Scratch sc) {
    int start = csr == null ? 0 : csr.rowStart(i);
    int degree = csr == null ? n : csr.rowEnd(i) - start;
    if (degree == 0) {
      int outBase = i * valueWidth;
      Arrays.fill(out, outBase, outBase + valueWidth, 0f);
      return;
    }
    sourcesRow(i, start, degree, csr == null ? (long) i * n : start, sc);
  }

  /**
   * Computes row i, whose {@code degree >= 1} sources are the entries from {@code start} (the first
   * source's column in the CSR graph, or 0 for the complete pattern); {@code firstEntry} is the
   * index of the row's first weight.
   */
  abstract void sourcesRow(int i, int start, int degree, long firstEntry, Scratch sc);

  /** Resets the running maxima, sums and accumulator for a new row. */
  static void beginRow(Scratch sc) {
    Arrays.fill(sc.acc, 0f);
    Arrays.fill(sc.max, Float.NEGATIVE_INFINITY);
    Arrays.fill(sc.sum, 0f);
  }

  /** Writes row i's output (and weights) from the running sums of its last block. */
  final void finishRow(int i, int degree, long firstEntry, Scratch sc) {
    int outBase = i * valueWidth;
    float[] acc = sc.acc;
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
  final void normaliseWeights(int degree, long firstEntry, Scratch sc) {
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
   * The additive score of target i, source j, head h in float64, clamped to the float range: the
   * rare path after a float overflow.
   */
  final float exactAdditiveScore(int i, int j, int h, float slope) {
    assert keyDim == 1;
    return clamp(leakyRelu((double) query[i * keyWidth + h] + key[j * keyWidth + h], slope));
  }

  static double leakyRelu(double z, float slope) {
    return z > 0 ? z : slope * z;
  }

  static float clamp(double e) {
    return (float) Math.max(-Float.MAX_VALUE, Math.min(Float.MAX_VALUE, e));
  }
}
