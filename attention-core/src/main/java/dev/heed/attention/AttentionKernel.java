package dev.heed.attention;

import dev.heed.graph.AttentionPattern;

/**
 * Multi-head attention over a pattern of allowed pairs. For each target node {@code i} and head
 * {@code h}:
 *
 * <pre>
 *   e_ij  = score(q_i[h], k_j[h])                  for every j with pattern.allows(i, j)
 *   α_ij  = exp(e_ij) / Σ_j' exp(e_ij')            (softmax over row i's allowed j)
 *   out_i[h] = Σ_j α_ij · v_j[h]
 * </pre>
 *
 * <p>Graph attention and full self-attention differ only in the {@link ScoreFunction} and the
 * pattern ({@link dev.heed.graph.CompletePattern} for full self-attention).
 *
 * <p>Arrays are node-major and head-contiguous, as described in {@link HeadShape}. A target with no
 * allowed sources (an isolated node) gets an all-zero output row and no weights.
 *
 * <p>Cost: O(E·H·(keyDim + valueDim)) for the sparse path; O(n²·H·(keyDim + valueDim)) for the
 * dense path whatever the pattern. Implementations are {@code final}; use {@link AttentionKernels}
 * to obtain one. Callers go through {@link AttentionKernels#checkCall}, which every implementation
 * runs first, so bad input is rejected the same way on every path.
 *
 * <p>The contract every implementation follows (the shared contract test checks it):
 *
 * <ul>
 *   <li><b>Overflow.</b> Scores are float32. Finite inputs whose scores, row sums or weighted sums
 *       overflow float32 do not fail and do not give NaN: such a row is recomputed in float64 with
 *       each score clamped to ±{@link Float#MAX_VALUE}, so the output is the float64 attention of
 *       the clamped scores, a finite convex combination of value rows.
 *   <li><b>Threads.</b> {@link KernelOptions#threads()} is the most threads one call uses, the
 *       calling thread included; helpers come from one JVM-wide pool of daemon threads shared by
 *       every kernel, which no call creates or shuts down.
 *   <li><b>Determinism.</b> The same inputs give the same bits on every call and for every thread
 *       count: work is split in fixed ranges and every sum runs in a fixed order. The dense path's
 *       BLAS products may in addition depend on the BLAS library's own thread setting.
 *   <li><b>Inputs.</b> Never modified; NaN and infinities are rejected before any output is
 *       written.
 * </ul>
 *
 * <p>Thread safety: every implementation is immutable and may be called from many threads at once;
 * each call uses only its own arguments and per-call scratch.
 */
public interface AttentionKernel {

  /**
   * Returns which path this kernel computes on.
   *
   * @return the path
   */
  ComputePath path();

  /**
   * Returns a short description of the implementation that runs, for logs and diagnostics (for
   * example {@code "csr-vector(256-bit), 2 threads"}).
   *
   * @return a human-readable name
   */
  String describe();

  /**
   * Computes attention for every target node of {@code pattern}.
   *
   * @param pattern input: the allowed (target, source) pairs, n nodes
   * @param score input: the score function; must fit {@code shape}
   * @param shape input: heads and widths
   * @param query input, not modified: target-side terms, {@code n * shape.keyWidth()} floats
   * @param key input, not modified: source-side terms, {@code n * shape.keyWidth()} floats
   * @param value input, not modified: value rows, {@code n * shape.valueWidth()} floats
   * @param out output, overwritten: {@code n * shape.valueWidth()} floats
   * @param weights optional output, or null: if given, overwritten with α, {@code entryCount *
   *     heads} floats, entry-major (the weight of entry {@code e}, head {@code h} at {@code e *
   *     heads + h}); entries in CSR order, or row-major {@code i * n + j} for the complete pattern
   * @throws IllegalArgumentException if a length does not match, the score does not fit the shape,
   *     or an input holds NaN or an infinity (the message names the array and index)
   * @throws MemoryBudgetExceededException if a dense computation would exceed its memory budget
   */
  void attend(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights);
}
