package dev.heed.sparse.internal;

import dev.heed.attention.internal.FastExp;

/**
 * The inner loops of the CSR kernel's per-head path ({@link PerHeadPass}), which serves every score
 * function and head shape: spans of floats in, numbers out.
 *
 * <p>Every method works on the span {@code [offset, offset + length)} of its arrays, and callers
 * guarantee valid offsets and lengths (implementations only {@code assert}). Results depend only on
 * the span contents and length, never on which thread runs, whether the code is interpreted or
 * compiled, or on alignment, so that the kernel's results are bit-identical for any thread count:
 * implementations use only IEEE-754 add, multiply, fused multiply-add, compare and exact bit
 * manipulation, in a fixed order (no {@code reduceLanes(ADD)}, whose order is unspecified, and no
 * library {@code exp}, whose vector and scalar forms differ).
 *
 * <p>Thread safety: implementations are stateless and safe from any thread.
 */
public interface PerHeadMath {

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
   * Computes the scaled dot-product scores of a block of entries for every head, head-major: {@code
   * s[h·stride + t] = scale · Σ_k q[qo + h·keyDim + k] · keys[rowBase[t] + h·keyDim + k]} over
   * {@code k < keyDim}, for {@code h < heads} and {@code t < count}, in float32. Scoring many
   * entries per call lets an implementation score several entries per vector operation instead of
   * reducing the lanes of every entry on its own. The order of the additions is the
   * implementation's, fixed for every entry (so a score depends only on its entry and the query).
   *
   * @param q input, not modified: the target's query row
   * @param qo offset of the query row in {@code q}
   * @param keys input, not modified: key rows of {@code heads · keyDim} floats
   * @param rowBase input, not modified: the start of each entry's key row in {@code keys}
   * @param count number of entries, at least 1
   * @param heads number of heads, at least 1
   * @param keyDim key width per head, at least 1
   * @param scale the factor applied to each dot product
   * @param s output: head h's scores at {@code h·stride}; floats past {@code count} in each head's
   *     span of {@code stride} may be overwritten
   * @param stride distance between heads in {@code s}: at least {@code count} and a multiple of 8
   * @return true if every score is finite; false if one overflowed to infinity or NaN (the caller
   *     recomputes those)
   */
  default boolean dotScores(
      float[] q,
      int qo,
      float[] keys,
      int[] rowBase,
      int count,
      int heads,
      int keyDim,
      float scale,
      float[] s,
      int stride) {
    // one score at a time, each a dot
    boolean finite = true;
    for (int t = 0; t < count; t++) {
      for (int h = 0, o = 0; h < heads; h++, o += keyDim) {
        float e = dot(q, qo + o, keys, rowBase[t] + o, keyDim) * scale;
        s[h * stride + t] = e;
        finite &= Float.isFinite(e);
      }
    }
    return finite;
  }

  /**
   * Returns whether {@link #dotRow} is offered for this head shape. The kernel asks once per call;
   * where it is not offered, rows take the blocks of {@link #dotScores} and the online softmax.
   *
   * @param heads number of heads
   * @param keyDim key width per head
   * @param valueDim value width per head
   * @return true if {@link #dotRow} computes rows of this shape
   */
  default boolean scoresWholeRows(int heads, int keyDim, int valueDim) {
    return false;
  }

  /**
   * Computes one whole row of scaled dot-product attention, for a shape {@link #scoresWholeRows}
   * accepts: the scores {@code scale · Σ_k q[qo + h·keyDim + k] · keys[rowBase[t] + h·keyDim + k]}
   * (summed as {@link #dotScores} sums them), each head's exact maximum over the row, the
   * exponentials {@code w[t·heads + h] = exp(score - max_h)} and their sums {@code sums[h]}, and
   * the output {@code out[outOffset + h·valueDim + x] = Σ_t w[t·heads + h] · values[rowBase[t] +
   * h·valueDim + x] / sums[h]}. The scores, exponentials and sums are entry-major and held for the
   * whole row, so the row needs one pass per step and no rescaling of partial sums; every sum is
   * taken in a fixed order that depends only on the row.
   *
   * @param q input, not modified: the target's query row
   * @param qo offset of the query row in {@code q}
   * @param keys input, not modified: key rows of {@code heads · keyDim} floats
   * @param values input, not modified: value rows of {@code heads · valueDim} floats
   * @param rowBase input, not modified: the start of each entry's key row in {@code keys}, which is
   *     also the start of its value row in {@code values} (key and value rows are equally wide)
   * @param count number of entries, at least 1
   * @param heads number of heads
   * @param keyDim key width per head
   * @param valueDim value width per head
   * @param scale the factor applied to each dot product
   * @param w output: the row's unnormalised weights, entry-major; at least {@code count · heads +
   *     8} floats, those past {@code count · heads} overwritten with unspecified values
   * @param sums output: each head's sum of {@code w}, at least 1
   * @param out output: the row's {@code heads · valueDim} floats at {@code outOffset}
   * @param outOffset offset of the row in {@code out}
   * @return true if every score is finite; false if one overflowed to infinity or NaN, and then
   *     {@code out} is not written (the caller computes the row another way)
   */
  default boolean dotRow(
      float[] q,
      int qo,
      float[] keys,
      float[] values,
      int[] rowBase,
      int count,
      int heads,
      int keyDim,
      int valueDim,
      float scale,
      float[] w,
      float[] sums,
      float[] out,
      int outOffset) {
    throw new UnsupportedOperationException(
        "whole rows are not offered for "
            + heads
            + " heads of "
            + keyDim
            + " key and "
            + valueDim
            + " value floats; check scoresWholeRows first");
  }

  /**
   * Computes the scaled dot-product scores of a run of consecutive source nodes for every head,
   * head-major, for two target rows at once, from keys stored by dimension (a key table transposed
   * once per call, see {@link KeyColumns}): {@code s[h·stride + t] = scale · Σ_k q[qo + h·keyDim +
   * k] · columns[(h·keyDim + k)·columnLength + first + t]} over {@code k < keyDim}, for {@code h <
   * heads} and {@code t < count}, in float32, and the same into {@code s2} for the query row at
   * {@code qo2} (which may be the same row, with {@code s2} the same array). The products are added
   * in order of k and then scaled, with the same operations for every entry (the vector form fuses
   * each multiply-add, here they are rounded apart), so a score's bits depend only on the entry and
   * the query, never on where it lies in the run or which row it is paired with. Consecutive
   * sources lie side by side in each dimension's row, so an implementation can score several
   * entries per vector operation with no sum across lanes, and use each load of keys for both rows.
   *
   * @param q input, not modified: the query rows
   * @param qo offset of the first query row in {@code q}
   * @param qo2 offset of the second query row in {@code q}
   * @param columns input, not modified: {@code heads · keyDim} rows of {@code columnLength} floats,
   *     row c holding key float c of every node
   * @param columnLength length of a row of {@code columns}, at least {@code first + count}
   * @param first the run's first source node
   * @param count number of entries, at least 1
   * @param heads number of heads, at least 1
   * @param keyDim key width per head, at least 1
   * @param scale the factor applied to each dot product
   * @param s output: the first row's scores, head h's at {@code h·stride}
   * @param s2 output: the second row's scores, laid out as {@code s}
   * @param stride distance between heads in {@code s} and {@code s2}, at least {@code count}
   * @return true if every score is finite; false if one overflowed to infinity or NaN (the caller
   *     recomputes those)
   */
  default boolean dotScoresOfRuns(
      float[] q,
      int qo,
      int qo2,
      float[] columns,
      int columnLength,
      int first,
      int count,
      int heads,
      int keyDim,
      float scale,
      float[] s,
      float[] s2,
      int stride) {
    boolean finite = true;
    for (int row = 0; row < 2; row++) {
      float[] out = row == 0 ? s : s2;
      for (int h = 0; h < heads; h++) {
        int qh = (row == 0 ? qo : qo2) + h * keyDim;
        int ch = h * keyDim * columnLength + first;
        for (int t = 0; t < count; t++) {
          float e = q[qh] * columns[ch + t];
          for (int k = 1, c = ch + columnLength + t; k < keyDim; k++, c += columnLength) {
            e += q[qh + k] * columns[c];
          }
          e *= scale;
          out[h * stride + t] = e;
          finite &= Float.isFinite(e);
        }
      }
    }
    return finite;
  }

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
   * For every head of one block of entries, adds the weighted value rows into the accumulator:
   * {@link #weightedRowSum} for each head h, with head h's weights at {@code w[h·stride]}, value
   * offset and accumulator offset {@code h·valueDim}; the same sums in the same order. Taking all
   * heads in one call lets an implementation keep more independent accumulators in flight.
   *
   * @param w input, not modified: head h's unnormalised weights at {@code h·stride}
   * @param stride distance between heads in {@code w}
   * @param rowBase input, not modified: the start of each entry's value row in {@code value}
   * @param count number of entries, at least 1
   * @param heads number of heads, at least 1
   * @param valueDim value width per head, at least 1
   * @param value input, not modified: value rows of {@code heads · valueDim} floats
   * @param acc input and output: the accumulator row, {@code heads · valueDim} floats from 0
   */
  default void weightedRowSums(
      float[] w,
      int stride,
      int[] rowBase,
      int count,
      int heads,
      int valueDim,
      float[] value,
      float[] acc) {
    for (int h = 0, o = 0; h < heads; h++, o += valueDim) {
      weightedRowSum(w, h * stride, rowBase, count, o, value, acc, o, valueDim);
    }
  }

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
}
