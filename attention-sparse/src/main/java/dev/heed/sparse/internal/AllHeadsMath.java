package dev.heed.sparse.internal;

/**
 * The inner loops of the CSR kernel's all-heads path ({@link AllHeadsPass}): additive (GAT) scores
 * with {@link #HEADS} heads of {@link #HEADS} value floats, all heads of an entry at once. With
 * 256-bit vectors a node's 8 key terms are one vector and its 64 value floats 8 vectors, one per
 * head.
 *
 * <p>Callers guarantee valid offsets and lengths (implementations only {@code assert}). The vector
 * and scalar implementations do the same IEEE-754 operations in the same order, so their results
 * are bit-identical (the scalar one is the tested reference; the kernel takes this path only where
 * {@link RowMath#servesAllHeads()}).
 *
 * <p>Thread safety: implementations are stateless and safe from any thread.
 */
public interface AllHeadsMath {

  /**
   * The head count and per-head value width that these methods serve: {@value}. A node's key terms
   * are {@code HEADS} floats and its value row {@code HEADS · HEADS} floats (256 bytes).
   */
  int HEADS = 8;

  /**
   * Writes the additive (GAT) scores of all {@link #HEADS} heads of a block of entries, edge-major:
   * {@code s[t·8 + h] = LeakyReLU(q[qOffset + h] + keys[keysOffset + t·8 + h])} for {@code t <
   * count} (Veličković et al. 2018, eq. 3, with the concatenation split into query and key terms),
   * computed as {@code max(z, z · negativeSlope)}.
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
  boolean additiveScores(
      float[] q,
      int qOffset,
      float[] keys,
      int keysOffset,
      int count,
      float negativeSlope,
      float[] s);

  /**
   * {@link #additiveScores} with each entry's key terms read in place from the exact layout of the
   * packed node table ({@link #pack}): entry t's key terms start {@link
   * PackedNodeTable#EXACT_KEYS_BEFORE_VALUES} floats before its value row; the same operations, so
   * the same bits.
   *
   * @param q input, not modified: the target's query terms
   * @param qOffset offset of head 0's term in {@code q}
   * @param table input, not modified: the packed node table, exact layout
   * @param rowBase input, not modified: the start of each entry's value row in {@code table}
   * @param count number of entries, at least 1
   * @param negativeSlope LeakyReLU slope in {@code [0, 1)}
   * @param s output: {@code count · 8} scores
   * @return true if every score is finite; if false, the caller recomputes the non-finite ones
   */
  boolean additiveScoresInTable(
      float[] q,
      int qOffset,
      float[] table,
      int[] rowBase,
      int count,
      float negativeSlope,
      float[] s);

  /**
   * One block of the online softmax and weighted sum, all heads at once (Milakov &amp; Gimelshein
   * 2018, applied per block): per head, the new maximum is {@code max(max[h], max_t s[t·8+h])};
   * {@code sum[h]} and the head's accumulator span are multiplied by {@code exp(oldMax - newMax)}
   * (0 when the old maximum is {@code -Infinity}); then each score is replaced by {@code p = exp(s
   * - newMax)}, {@code sum[h] += p} in order of t, and {@code acc[h·8 + x] = fma(p,
   * value[rowBase[t] + h·8 + x], acc[h·8 + x])} in order of t.
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
  void softmaxAccumulate(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] acc,
      float[] work);

  /**
   * A whole row whose entries fit in one block: exactly {@link #softmaxAccumulate} started from
   * {@code max[h] = -Infinity}, {@code sum[h] = 0} and a zero accumulator, then {@code
   * out[outOffset + h·8 + x] = acc[h·8 + x] / sum[h]}. The same bits as those steps; the vector
   * implementation skips the rescale of an empty accumulator and keeps the accumulator in registers
   * (on power-law graphs most rows are short, and these per-row steps cost as much as the entries).
   *
   * @param s input and output: {@code count · 8} finite scores in, unnormalised weights out
   * @param count number of entries, at least 1
   * @param max output: the 8 row maxima
   * @param sum output: the 8 row sums
   * @param rowBase input, not modified: the start of each entry's 64-float value row
   * @param value input, not modified: the value rows
   * @param out output: the row's 64 normalised output floats at {@code outOffset}
   * @param outOffset start of the row in {@code out}
   */
  void softmaxRow(
      float[] s,
      int count,
      float[] max,
      float[] sum,
      int[] rowBase,
      float[] value,
      float[] out,
      int outOffset);

  /**
   * A row whose only entry has a finite score, without the score: exactly what {@link #softmaxRow}
   * with {@code count = 1} writes to {@code out} for any finite score. There the maximum is the
   * score itself, its weight {@code exp(0) = 1}, the sum 1, and each output float {@code fma(1, v,
   * +0) / 1}, which is {@code v + 0f}: {@code v} itself, except that {@code -0} becomes {@code +0}.
   * On power-law graphs with self-loops added, the rows of nodes that nothing points to are such
   * rows (48 % of the rows of the R-MAT benchmark graph at 1M nodes).
   *
   * @param value input, not modified: the value rows
   * @param rowBase start of the entry's 64-float value row in {@code value}
   * @param out output: the row's 64 output floats at {@code outOffset}
   * @param outOffset start of the row in {@code out}
   */
  void singleEntryRow(float[] value, int rowBase, float[] out, int outOffset);

  /**
   * Copies the key terms and value rows of nodes {@code from..to-1} into the exact layout of the
   * packed node table ({@link PackedNodeTable}): node c's 8 key terms {@link
   * PackedNodeTable#EXACT_KEYS_BEFORE_VALUES} floats before {@link PackedNodeTable#exactValueRow
   * exactValueRow(c)}, its 64 value floats from there; reports whether every float copied is finite
   * (so that the kernel's check for NaN and infinities reads the inputs only once).
   *
   * @param key input, not modified: 8 key terms per node
   * @param value input, not modified: 64 value floats per node
   * @param from first node
   * @param to one past the last node, at least {@code from + 1}
   * @param table output: the packed rows of nodes {@code from..to-1}
   * @return true if every copied float is finite
   */
  boolean pack(float[] key, float[] value, int from, int to, float[] table);
}
