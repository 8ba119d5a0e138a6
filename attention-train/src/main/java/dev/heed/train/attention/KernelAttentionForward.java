package dev.heed.train.attention;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.HeadShape;
import dev.heed.graph.AttentionPattern;
import java.util.Objects;

/**
 * Runs the training forward pass through a serving {@link AttentionKernel}: rounds the float64
 * inputs to float32, calls {@link AttentionKernel#attend} with its optional weights output, and
 * widens the output and α back to float64. No score or softmax is computed here, so a model is
 * trained on exactly the forward pass it will be served with.
 *
 * <p>Cost: the kernel's, plus O(n·H·(keyDim + valueDim) + E·H) for the conversions; it allocates
 * float32 copies of every array per call.
 *
 * <p>Thread safety: immutable; as thread-safe as the kernel (every kernel is).
 */
public final class KernelAttentionForward implements AttentionForward {

  private final AttentionKernel kernel;

  /**
   * Wraps a kernel.
   *
   * @param kernel the serving kernel, for example from {@link
   *     dev.heed.attention.AttentionKernels#forPath}
   */
  public KernelAttentionForward(AttentionKernel kernel) {
    this.kernel = Objects.requireNonNull(kernel, "kernel");
  }

  /**
   * Returns the wrapped kernel.
   *
   * @return the kernel
   */
  public AttentionKernel kernel() {
    return kernel;
  }

  @Override
  public void attend(
      AttentionPattern pattern,
      AttentionScore score,
      HeadShape shape,
      double[] query,
      double[] key,
      double[] value,
      double[] out,
      double[] weights) {
    Objects.requireNonNull(out, "out");
    Objects.requireNonNull(weights, "weights");
    float[] q = toFloat(Objects.requireNonNull(query, "query"));
    float[] k = toFloat(Objects.requireNonNull(key, "key"));
    float[] v = toFloat(Objects.requireNonNull(value, "value"));
    float[] o = new float[out.length];
    long entries = pattern.entryCount() * shape.heads();
    if (weights.length != entries) {
      throw new IllegalArgumentException(
          "weights must have length entryCount * heads = "
              + pattern.entryCount()
              + " * "
              + shape.heads()
              + " = "
              + entries
              + ", got "
              + weights.length);
    }
    float[] w = new float[weights.length];
    kernel.attend(pattern, score.toKernelScore(), shape, q, k, v, o, w);
    for (int i = 0; i < o.length; i++) {
      out[i] = o[i];
    }
    for (int i = 0; i < w.length; i++) {
      weights[i] = w[i];
    }
  }

  private static float[] toFloat(double[] a) {
    float[] f = new float[a.length];
    for (int i = 0; i < a.length; i++) {
      f[i] = (float) a[i];
    }
    return f;
  }

  @Override
  public String toString() {
    return "KernelAttentionForward[" + kernel.describe() + "]";
  }
}
