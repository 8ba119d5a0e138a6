package dev.heed.sparse.internal;

/**
 * The inner loops of the CSR kernel's factored path ({@link FactoredAllHeadsPass}): additive (GAT)
 * scores with {@link AllHeadsMath#HEADS} heads of 8 value floats over the factored layout of the
 * packed node table, where a weight costs a compare, a multiply and a blend instead of a score, a
 * row maximum and an exponential.
 *
 * <p>With {@code K[h]} the largest key term of head h over all nodes and {@code z = q[h] + K[h]},
 * every score {@code LeakyReLU(q + k)} of a row is at most the bound {@code m = LeakyReLU(z)}, and
 * its weight relative to that bound factors into per-node and per-row terms: {@code exp(LeakyReLU(q
 * + k) - m)} is {@code E = exp(k - K)} where {@code q + k >= 0} and {@code F · B} elsewhere, with
 * {@code F = exp(slope · (k - K))} and {@code B = exp(-(1 - slope) · max(z, 0))} (Veličković et al.
 * 2018, eq. 3, with {@code exp(a + b) = exp(a) · exp(b)}; LeakyReLU is linear on each side of 0).
 * The table holds E and F per node; an entry is taken as {@code q + k >= 0} when {@code E >= T},
 * {@code T = exp(-z)} ({@code +Infinity} when {@code z < 0}); near {@code q + k = 0} the two forms
 * agree to rounding.
 *
 * <p>Callers guarantee valid offsets and lengths (implementations only {@code assert}). The vector
 * and scalar implementations do the same IEEE-754 operations in the same order, so their results
 * are bit-identical (the scalar one is the tested reference).
 *
 * <p>Thread safety: implementations are stateless and safe from any thread.
 */
public interface FactoredMath {

  /**
   * The smallest row sum of factored weights that {@link #row} accepts: {@code 2^-60}. Below it (a
   * row whose best score is more than about 41 below the bound of its weights) the caller
   * recomputes the row with the exact online softmax, so that no row loses precision to underflow.
   */
  float MIN_SUM = 0x1p-60f;

  /**
   * Raises {@code max[h]} to the largest key term of head h over nodes {@code from..to-1} ({@code
   * max[h] = Math.max(max[h], key[c·8 + h])}), and reports whether every key term read is finite.
   *
   * @param key input, not modified: 8 key terms per node
   * @param from first node
   * @param to one past the last node
   * @param max input and output: the 8 running maxima
   * @return true if every key term read is finite
   */
  boolean keyMaxima(float[] key, int from, int to, float[] max);

  /**
   * Fills the factored layout of the packed node table for nodes {@code from..to-1}: {@code E[h] =
   * exp(d)} {@link PackedNodeTable#FACTORED_E_BEFORE_VALUES} floats and {@code F[h] = exp(d ·
   * negativeSlope)} {@link PackedNodeTable#FACTORED_F_BEFORE_VALUES} floats before {@link
   * PackedNodeTable#factoredValueRow factoredValueRow(c)}, with {@code d = key[c·8 + h] -
   * keyMax[h]} (both {@link dev.heed.attention.internal.FastExp#expNonPositive}; {@code d <= 0}
   * because keyMax holds the maxima), then the node's 64 value floats from there; reports whether
   * every value float is finite (the key terms were checked by {@link #keyMaxima}).
   *
   * @param key input, not modified: 8 key terms per node
   * @param value input, not modified: 64 value floats per node
   * @param from first node
   * @param to one past the last node, at least {@code from + 1}
   * @param keyMax input, not modified: per head, the largest key term over all nodes
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table output: the factored rows of nodes {@code from..to-1}
   * @return true if every value float is finite
   */
  boolean pack(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table);

  /**
   * A whole row with factored weights, all heads at once. Computed, in this order: {@code B},
   * {@code T}; for each entry t, {@code p = E >= T ? E : F · B} into {@code s[t·8 + h]} and {@code
   * sum[h] += p} (from 0), then the sums into {@code s[count·8 + h]}; if any {@code sum[h]} is not
   * at least {@link #MIN_SUM}, return false with {@code out} untouched; else {@code acc[h·8 + x] =
   * fma(p, value, acc)} in order of t (from 0) and {@code out[outOffset + h·8 + x] = acc[h·8 + x] /
   * sum[h]}. No per-entry exponential and no row maximum: that is the point.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keyMax input, not modified: the table's per-head key maxima
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table input, not modified: the factored node table ({@link #pack})
   * @param rowBase input, not modified: the start of each entry's value row in {@code table}
   * @param count number of entries, at least 1
   * @param s work array of at least {@code (count + 1) · 8} floats, contents ignored; holds the
   *     weights and their sums afterwards
   * @param out output: the row's 64 output floats at {@code outOffset}, if true is returned
   * @param outOffset start of the row in {@code out}
   * @return false if a head's sum is too small (or not a number), and the row must be recomputed
   */
  boolean row(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] out,
      int outOffset);

  /**
   * One block of a longer row with factored weights: the weights of {@link #row} for the block's
   * entries into {@code s[t·8 + h]}, added to {@code sum} and, through {@code fma} in order of t,
   * to {@code acc}. The bound does not move between blocks, so nothing is rescaled; the caller
   * checks the sums against {@link #MIN_SUM} and divides after the last block.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keyMax input, not modified: the table's per-head key maxima
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table input, not modified: the factored node table
   * @param rowBase input, not modified: the start of each entry's value row in {@code table}
   * @param count number of entries, at least 1
   * @param s work array of at least {@code count · 8} floats, contents ignored
   * @param sum input and output: the 8 running sums
   * @param acc input and output: the 64-float accumulator
   */
  void block(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] sum,
      float[] acc);

  /**
   * {@link #pack} for the factored layout with bfloat16 values ({@link
   * PackedNodeTable#bfloat16ValueRow}): the same E and F factors as float32, then the node's 64
   * values rounded by {@link Bfloat16#round}, value {@code j} and {@code j + 32} in word {@code j};
   * reports whether every value float is finite.
   *
   * @param key input, not modified: 8 key terms per node
   * @param value input, not modified: 64 value floats per node
   * @param from first node
   * @param to one past the last node, at least {@code from + 1}
   * @param keyMax input, not modified: per head, the largest key term over all nodes
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table output: the rows of nodes {@code from..to-1}
   * @return true if every value float is finite
   */
  boolean packBfloat16(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table);

  /**
   * {@link #row} over the factored layout with bfloat16 values: the same weights and sums, and the
   * weighted sum of the decoded values ({@code fma(p, value, acc)} in order of t, float32).
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keyMax input, not modified: the table's per-head key maxima
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table input, not modified: the table ({@link #packBfloat16})
   * @param rowBase input, not modified: the start of each entry's value words in {@code table}
   * @param count number of entries, at least 1
   * @param s work array of at least {@code (count + 1) · 8} floats, contents ignored; holds the
   *     weights and their sums afterwards
   * @param out output: the row's 64 output floats at {@code outOffset}, if true is returned
   * @param outOffset start of the row in {@code out}
   * @return false if a head's sum is too small (or not a number), and the row must be recomputed
   */
  boolean rowBfloat16(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] out,
      int outOffset);

  /**
   * {@link #block} over the factored layout with bfloat16 values.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keyMax input, not modified: the table's per-head key maxima
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table input, not modified: the table ({@link #packBfloat16})
   * @param rowBase input, not modified: the start of each entry's value words in {@code table}
   * @param count number of entries, at least 1
   * @param s work array of at least {@code count · 8} floats, contents ignored
   * @param sum input and output: the 8 running sums
   * @param acc input and output: the 64-float accumulator
   */
  void blockBfloat16(
      float[] q,
      int qOffset,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int[] rowBase,
      int count,
      float[] s,
      float[] sum,
      float[] acc);
}
