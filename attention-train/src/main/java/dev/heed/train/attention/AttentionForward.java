package dev.heed.train.attention;

import dev.heed.attention.HeadShape;
import dev.heed.graph.AttentionPattern;

/**
 * The attention forward pass as training sees it: float64 arrays in the layouts of {@link
 * dev.heed.attention.AttentionKernel} ({@link HeadShape}: node-major, head-contiguous; weights
 * entry-major, CSR entry order or row-major {@code i * n + j} for the complete pattern).
 *
 * <p>The production implementation is {@link KernelAttentionForward}, which runs the serving
 * kernel, so training and serving share one forward pass. {@link Float64AttentionForward} evaluates
 * the same equations in float64 without a kernel: gradient checks against finite differences use
 * it, and so do the check vectors of exported models.
 *
 * <p>Thread safety: implementations state their own; {@link KernelAttentionForward} is immutable
 * and may be shared.
 */
public interface AttentionForward {

  /**
   * Computes {@code out_i[h] = Σ_j α_ij v_j[h]} with {@code α} the softmax of the scores over row
   * {@code i}'s allowed sources, and writes {@code α}.
   *
   * @param pattern input: allowed pairs, n nodes
   * @param score input: the score function
   * @param shape input: heads and widths
   * @param query input, not modified: {@code n * shape.keyWidth()}
   * @param key input, not modified: {@code n * shape.keyWidth()}
   * @param value input, not modified: {@code n * shape.valueWidth()}
   * @param out output, overwritten: {@code n * shape.valueWidth()}
   * @param weights output, overwritten: α, {@code entryCount * heads}, entry-major
   * @throws IllegalArgumentException if a length does not fit or an input is not finite
   */
  void attend(
      AttentionPattern pattern,
      AttentionScore score,
      HeadShape shape,
      double[] query,
      double[] key,
      double[] value,
      double[] out,
      double[] weights);
}
