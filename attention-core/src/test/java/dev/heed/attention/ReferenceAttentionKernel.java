package dev.heed.attention;

import dev.heed.graph.AttentionPattern;

/**
 * The float64 reference wrapped as an {@link AttentionKernel} ({@link
 * ReferenceAttention#kernel()}), rounding to float32 at the end. For tests of code that needs some
 * kernel (layers, models) without depending on a fast one.
 */
public final class ReferenceAttentionKernel implements AttentionKernel {

  private final AttentionKernel reference = ReferenceAttention.kernel();

  @Override
  public ComputePath path() {
    return ComputePath.SPARSE;
  }

  @Override
  public String describe() {
    return "float64 reference (tests only)";
  }

  @Override
  public void attend(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights) {
    reference.attend(pattern, score, shape, query, key, value, out, weights);
  }
}
