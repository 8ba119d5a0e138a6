package dev.heed.sparse.internal;

import dev.heed.attention.internal.FastExp;

/**
 * The inner loops of the CSR attention kernel: spans of floats in, numbers out. Internal to {@code
 * attention-sparse}, not API.
 *
 * <p>Every method works on the span {@code [offset, offset + length)} of its arrays, and callers
 * guarantee valid offsets and lengths (implementations only {@code assert}). Results must depend
 * only on the span contents and length, never on which thread runs, whether the code is interpreted
 * or compiled, or on alignment: the kernel's results are bit-identical for any thread count because
 * of this. In particular, implementations use only IEEE-754 add, multiply, fused multiply-add,
 * compare and exact bit manipulation, in a fixed order (no {@code reduceLanes(ADD)}, whose order is
 * unspecified, and no library {@code exp}, whose vector and scalar forms differ).
 *
 * <p>Thread safety: implementations are stateless and safe from any thread.
 */
public interface RowMath {

  /**
   * Returns a short name for logs, for example {@code "vector(256-bit)"} or {@code "scalar"}.
   *
   * @return the implementation name
   */
  String describe();

  /**
   * Returns the dot product {@code Σ a[ao+k] · b[bo+k]} over {@code k < length}, in float32.
   *
   * @param a input, not modified
   * @param ao offset in {@code a}
   * @param b input, not modified
   * @param bo offset in {@code b}
   * @param length span length, at least 1
   * @return the dot product; may be infinite or NaN if an intermediate overflows
   */
  float dot(float[] a, int ao, float[] b, int bo, int length);

  /**
   * Returns the GATv2 score {@code Σ att[ao+k] · LeakyReLU(q[qo+k] + key[ko+k])} over {@code k <
   * length} (Brody et al. 2022), in float32.
   *
   * @param att input, not modified: the head's attention vector
   * @param ao offset in {@code att}
   * @param q input, not modified: the target's query terms
   * @param qo offset in {@code q}
   * @param key input, not modified: the source's key terms
   * @param ko offset in {@code key}
   * @param length span length (the key width), at least 1
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @return the score; may be infinite or NaN if an intermediate overflows
   */
  float gatv2(
      float[] att, int ao, float[] q, int qo, float[] key, int ko, int length, float negativeSlope);

  /**
   * Returns the largest element of the span.
   *
   * @param s input, not modified, finite values
   * @param offset start of the span
   * @param length span length, at least 1
   * @return the maximum
   */
  float max(float[] s, int offset, int length);

  /**
   * Replaces each element {@code x} of the span by {@code exp(x - shift)} and returns their sum,
   * added in a fixed order. Callers pass {@code shift >= every x}, so each result lies in {@code
   * [0, 1]}; arguments below {@link FastExp#LOWEST_ARGUMENT} give 0. The exponential is {@link
   * FastExp}'s polynomial, not the library one.
   *
   * @param s input and output: finite scores in, unnormalised weights out
   * @param offset start of the span
   * @param length span length, at least 1
   * @param shift the value subtracted before exponentiating, finite
   * @return the sum of the new span
   */
  float expShiftSum(float[] s, int offset, int length, float shift);

  /**
   * For one head of one block of entries, adds the weighted value rows into the accumulator: {@code
   * acc[accOffset + x] += Σ_t w[wOffset + t] · value[rowBase[t] + headOffset + x]} for {@code x <
   * length}, the sum over {@code t < count} taken in order of t for every x. Keeping the loop over
   * entries inside lets an implementation hold the accumulator in registers.
   *
   * @param w input, not modified: the entries' unnormalised weights for this head
   * @param wOffset offset of entry 0's weight in {@code w}
   * @param rowBase input, not modified: the start of each entry's value row in {@code value}
   * @param count number of entries, at least 1
   * @param headOffset offset of this head's values within a value row
   * @param value input, not modified: the value rows
   * @param acc input and output: the accumulator
   * @param accOffset offset of this head's span in {@code acc}
   * @param length the head's value width, at least 1
   */
  void weightedRowSum(
      float[] w,
      int wOffset,
      int[] rowBase,
      int count,
      int headOffset,
      float[] value,
      float[] acc,
      int accOffset,
      int length);

  /**
   * Copies {@code count} rows of {@code width} floats from a table into consecutive rows of {@code
   * out}: {@code out[t·width + x] = table[rows[t]·width + x]} for {@code t < count}, {@code x <
   * width}. Gathering a block's rows in one loop of loads keeps many cache misses in flight before
   * anything uses them.
   *
   * @param table input, not modified: rows of {@code width} floats
   * @param width row width, at least 1
   * @param rows input, not modified: the row index of each entry
   * @param count number of rows, at least 1
   * @param out output: {@code count · width} floats
   */
  void gatherRows(float[] table, int width, int[] rows, int count, float[] out);

  /**
   * Multiplies each element of the span by {@code factor}.
   *
   * @param y input and output
   * @param offset start of the span
   * @param length span length, at least 1
   * @param factor the factor
   */
  void scale(float[] y, int offset, int length, float factor);

  /**
   * The head count and per-head value width that the all-heads methods serve: {@value}. With
   * additive (GAT) scores the 8 key terms of a node are one 256-bit vector and its 64 value floats
   * one 256-byte row of 8 vectors, one per head.
   */
  int ALL_HEADS = 8;

  /**
   * Returns whether the kernel takes the all-heads path ({@link #additiveScoresAllHeads}, {@link
   * #softmaxAccumulateAllHeads}) with this implementation: the vector one does where its vectors
   * hold exactly {@link #ALL_HEADS} floats, the scalar one never (its all-heads methods are the
   * bit-for-bit reference for the vector ones, and slower than its per-head loops). The all-heads
   * methods work in either case.
   *
   * @return true if the kernel should take the all-heads path
   */
  boolean servesAllHeads();

  /**
   * Writes the additive (GAT) scores of all {@link #ALL_HEADS} heads of a block of entries,
   * edge-major: {@code s[t·8 + h] = LeakyReLU(q[qOffset + h] + keys[keysOffset + t·8 + h])} for
   * {@code t < count} (Veličković et al. 2018, eq. 3, with the concatenation split into query and
   * key terms), computed as {@code max(z, z · negativeSlope)}.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keys input, not modified: the block's key rows, row t at {@code keysOffset + t · 8}
   * @param keysOffset offset of entry 0's key row in {@code keys}
   * @param count number of entries, at least 1
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param s output: {@code count · 8} scores
   * @return true if every score is finite; if false, the caller recomputes the non-finite ones
   */
  boolean additiveScoresAllHeads(
      float[] q,
      int qOffset,
      float[] keys,
      int keysOffset,
      int count,
      float negativeSlope,
      float[] s);

  /**
   * One block of the online softmax and weighted sum for {@link #ALL_HEADS} heads of {@link
   * #ALL_HEADS} value floats each, all heads at once (Milakov &amp; Gimelshein 2018, applied per
   * block): per head, the new maximum is {@code max(max[h], max_t s[t·8+h])}; {@code sum[h]} and
   * the head's accumulator span are multiplied by {@code exp(oldMax - newMax)} (0 when the old
   * maximum is {@code -Infinity}); then each score is replaced by {@code p = exp(s - newMax)},
   * {@code sum[h] += p} in order of t, and {@code acc[h·8 + x] = fma(p, value[rowBase[t] + h·8 +
   * x], acc[h·8 + x])} in order of t. Both implementations do exactly these operations, so their
   * results are bit-identical.
   *
   * @param s input and output: {@code count · 8} finite scores in, unnormalised weights out
   * @param count number of entries, at least 1
   * @param max input and output: the 8 running maxima
   * @param sum input and output: the 8 running sums
   * @param rowBase input, not modified: the start of each entry's 64-float value row
   * @param value input, not modified: the value rows
   * @param acc input and output: the 64-float accumulator
   * @param work work array of at least 8 floats, contents ignored
   */
  void softmaxAccumulateAllHeads(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work);

  /**
   * Floats per node in the packed node table of the all-heads path: the node's {@link #ALL_HEADS}
   * additive key terms, then its {@code ALL_HEADS · ALL_HEADS} value floats (288 bytes).
   */
  int PACKED_ROW = ALL_HEADS + ALL_HEADS * ALL_HEADS;

  /**
   * Copies the key terms and value rows of nodes {@code from..to-1} into the packed node table:
   * {@code table[tableOffset + c·72 + h] = key[c·8 + h]} for {@code h < 8} and {@code
   * table[tableOffset + c·72 + 8 + x] = value[c·64 + x]} for {@code x < 64}, and reports whether
   * every float copied is finite (so that the kernel's check for NaN and infinities reads the
   * inputs only once).
   *
   * @param key input, not modified: 8 key terms per node
   * @param value input, not modified: 64 value floats per node
   * @param from first node
   * @param to one past the last node, at least {@code from + 1}
   * @param table output: the packed rows of nodes {@code from..to-1}
   * @param tableOffset where node 0's packed row starts in {@code table}
   * @return true if every copied float is finite
   */
  boolean packAllHeads(
      float[] key, float[] value, int from, int to, float[] table, int tableOffset);

  /**
   * {@link #additiveScoresAllHeads} with each entry's key terms read in place from the packed node
   * table ({@link #packAllHeads}): entry t's 8 key terms are the 8 floats just before its value
   * row, at {@code table[rowBase[t] - 8 ..]}; the same operations, so the same bits.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param table input, not modified: the packed node table
   * @param rowBase input, not modified: the start of each entry's value row in {@code table}
   * @param count number of entries, at least 1
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param s output: {@code count · 8} scores
   * @return true if every score is finite; if false, the caller recomputes the non-finite ones
   */
  boolean additiveScoresAllHeadsPacked(
      float[] q,
      int qOffset,
      float[] table,
      int[] rowBase,
      int count,
      float negativeSlope,
      float[] s);

  /**
   * A whole row whose entries fit in one block, all heads at once: exactly {@link
   * #softmaxAccumulateAllHeads} started from {@code max[h] = -Infinity}, {@code sum[h] = 0} and a
   * zero accumulator, then {@code out[outOffset + h·8 + x] = acc[h·8 + x] / sum[h]}. The same bits
   * as those steps; the vector implementation skips the rescale of an empty accumulator and keeps
   * the accumulator in registers (on power-law graphs most rows are short, and these per-row steps
   * cost as much as the entries).
   *
   * @param s input and output: {@code count · 8} finite scores in, unnormalised weights out
   * @param count number of entries, at least 1
   * @param max output: the 8 row maxima
   * @param sum output: the 8 row sums
   * @param rowBase input, not modified: the start of each entry's 64-float value row
   * @param value input, not modified: the value rows
   * @param acc work array of at least 64 floats, contents ignored and overwritten
   * @param work work array of at least 8 floats, contents ignored
   * @param out output: the row's 64 normalised output floats at {@code outOffset}
   * @param outOffset start of the row in {@code out}
   */
  void softmaxRowAllHeads(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work,
      float[] out,
      int outOffset);

  /**
   * A row whose only entry has a finite score, all heads at once, without the score: exactly what
   * {@link #softmaxRowAllHeads} with {@code count = 1} writes to {@code out} for any finite score.
   * There the maximum is the score itself, its weight {@code exp(0) = 1}, the sum 1, and each
   * output float {@code fma(1, v, +0) / 1}, which is {@code v + 0f}: {@code v} itself, except that
   * {@code -0} becomes {@code +0}. On power-law graphs with self-loops added, the rows of nodes
   * that nothing points to are such rows (48 % of the rows of the R-MAT benchmark graph at 1M
   * nodes).
   *
   * @param value input, not modified: the value rows
   * @param rowBase start of the entry's 64-float value row in {@code value}
   * @param out output: the row's 64 output floats at {@code outOffset}
   * @param outOffset start of the row in {@code out}
   */
  void singleEntryRowAllHeads(float[] value, int rowBase, float[] out, int outOffset);

  /**
   * Floats per node in the factored node table of the all-heads path: the node's {@link #ALL_HEADS}
   * factors {@code E = exp(k - K)}, its {@link #ALL_HEADS} factors {@code F = exp(slope · (k -
   * K))}, then its {@code ALL_HEADS · ALL_HEADS} value floats (320 bytes, five whole cache lines).
   */
  int FACTORED_ROW = 2 * ALL_HEADS + ALL_HEADS * ALL_HEADS;

  /**
   * The smallest row sum of factored weights that {@link #factoredRowAllHeads} accepts: {@code
   * 2^-60}. Below it (a row whose best score is more than about 41 below the bound of its weights)
   * the caller recomputes the row with the exact online softmax, so that no row loses precision to
   * underflow.
   */
  float FACTORED_MIN_SUM = 0x1p-60f;

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
  boolean keyMaximaAllHeads(float[] key, int from, int to, float[] max);

  /**
   * Fills the factored node table for nodes {@code from..to-1}: at {@code tableOffset + c·80},
   * {@code E[h] = exp(d)} and then {@code F[h] = exp(d · negativeSlope)} with {@code d = key[c·8 +
   * h] - keyMax[h]} (both {@link dev.heed.attention.internal.FastExp#expNonPositive}; {@code d <=
   * 0} because keyMax holds the maxima), then the node's 64 value floats; reports whether every
   * value float is finite (the key terms were checked by {@link #keyMaximaAllHeads}).
   *
   * @param key input, not modified: 8 key terms per node
   * @param value input, not modified: 64 value floats per node
   * @param from first node
   * @param to one past the last node, at least {@code from + 1}
   * @param keyMax input, not modified: per head, the largest key term over all nodes
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table output: the factored rows of nodes {@code from..to-1}
   * @param tableOffset where node 0's row starts in {@code table}
   * @return true if every value float is finite
   */
  boolean packFactored(
      float[] key,
      float[] value,
      int from,
      int to,
      float[] keyMax,
      float negativeSlope,
      float[] table,
      int tableOffset);

  /**
   * A whole row with factored weights, all heads at once (no weights asked for). With {@code z =
   * q[qOffset + h] + keyMax[h]}, every entry's score {@code LeakyReLU(q + k)} is at most the bound
   * {@code m = LeakyReLU(z)}, and its weight relative to that bound factors into per-node and
   * per-row terms: {@code exp(LeakyReLU(q + k) - m)} is {@code E} where {@code q + k >= 0} and
   * {@code F · B} elsewhere, with {@code B = exp(-(1 - slope) · max(z, 0))} (Veličković et al.
   * 2018, eq. 3, with {@code exp(a + b) = exp(a) · exp(b)}). The entry is taken as {@code q + k >=
   * 0} when {@code E >= T}, {@code T = exp(-z)} ({@code +Infinity} when {@code z < 0}); near {@code
   * q + k = 0} the two forms agree to rounding. Computed, in this order: {@code B}, {@code T}; for
   * each entry t, {@code p = E >= T ? E : F · B} into {@code s[t·8 + h]} and {@code sum[h] += p}
   * (from 0), then the sums into {@code s[count·8 + h]}; if any {@code sum[h]} is not at least
   * {@link #FACTORED_MIN_SUM}, return false with {@code out} untouched; else {@code acc[h·8 + x] =
   * fma(p, value, acc)} in order of t (from 0) and {@code out[outOffset + h·8 + x] = acc[h·8 + x] /
   * sum[h]}. Both implementations do exactly these operations, so their results are bit-identical.
   * No per-entry exponential and no row maximum: that is the point.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param keyMax input, not modified: the table's per-head key maxima
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param table input, not modified: the factored node table ({@link #packFactored})
   * @param rowBase input, not modified: the start of each entry's value row in {@code table}; its E
   *     and F factors are the 16 floats before it
   * @param count number of entries, at least 1
   * @param s work array of at least {@code (count + 1) · 8} floats, contents ignored
   * @param out output: the row's 64 output floats at {@code outOffset}, if true is returned
   * @param outOffset start of the row in {@code out}
   * @return false if a head's sum is too small (or not a number), and the row must be recomputed
   */
  boolean factoredRowAllHeads(
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
   * One block of a longer row with factored weights: the weights of {@link #factoredRowAllHeads}
   * for the block's entries, added to {@code sum} and, through {@code fma} in order of t, to {@code
   * acc}. The bound does not move between blocks, so nothing is rescaled; the caller checks the
   * sums against {@link #FACTORED_MIN_SUM} and divides after the last block.
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
  void factoredBlockAllHeads(
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
