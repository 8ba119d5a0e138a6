package dev.heed.attention;

import dev.heed.attention.internal.FiniteScans;
import dev.heed.graph.AttentionPattern;
import java.util.Objects;
import java.util.ServiceLoader;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Front door to the attention kernels: obtains a kernel for a path, and validates every call.
 *
 * <p>Thread safety: stateless; safe from any thread.
 */
public final class AttentionKernels {

  private static final Logger LOG = LoggerFactory.getLogger(AttentionKernels.class);

  private AttentionKernels() {}

  /**
   * Returns a kernel for the given path.
   *
   * @param path the path to compute on
   * @param options threads and memory budget
   * @return the kernel; its {@link AttentionKernel#describe()} says which implementation runs
   * @throws IllegalStateException if no provider for {@code path} is on the class path (for the
   *     sparse path: add the {@code dev.heed:attention-sparse} dependency)
   */
  public static AttentionKernel forPath(ComputePath path, KernelOptions options) {
    Objects.requireNonNull(path, "path");
    Objects.requireNonNull(options, "options");
    for (AttentionKernelProvider provider :
        ServiceLoader.load(
            AttentionKernelProvider.class, AttentionKernels.class.getClassLoader())) {
      if (provider.path() == path) {
        AttentionKernel kernel = provider.create(options);
        LOG.debug("{} path: using {}", path, kernel.describe());
        return kernel;
      }
    }
    throw new IllegalStateException(
        "no attention kernel for the "
            + path
            + " path is on the class path"
            + (path == ComputePath.SPARSE
                ? "; add the dependency dev.heed:attention-sparse"
                : "; add the dependency dev.heed:attention-dense"));
  }

  /**
   * Validates one call of {@link AttentionKernel#attend}; every implementation calls this first.
   * Checks lengths against the pattern and shape, the score against the shape, and that no input
   * holds NaN or an infinity.
   *
   * @throws IllegalArgumentException naming the array, the expected and actual values
   * @throws NullPointerException if a required argument is null
   */
  public static void checkCall(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights) {
    checkCallShapes(pattern, score, shape, query, key, value, out, weights);
    checkFinite("query", query, shape.keyWidth());
    checkFinite("key", key, shape.keyWidth());
    checkFinite("value", value, shape.valueWidth());
  }

  /**
   * Everything {@link #checkCall} checks except that the inputs are finite: for an implementation
   * that reads every input anyway and checks finiteness on that pass. Such an implementation must
   * still reject a non-finite input before writing any output, with {@link #checkFinite} (query,
   * then key, then value), so that its errors match {@code checkCall}'s.
   *
   * @throws IllegalArgumentException naming the array, the expected and actual values
   * @throws NullPointerException if a required argument is null
   */
  public static void checkCallShapes(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(score, "score");
    Objects.requireNonNull(shape, "shape");
    Objects.requireNonNull(query, "query");
    Objects.requireNonNull(key, "key");
    Objects.requireNonNull(value, "value");
    Objects.requireNonNull(out, "out");
    score.checkCompatible(shape);
    int n = pattern.nodeCount();
    long keyLength = (long) n * shape.keyWidth();
    long valueLength = (long) n * shape.valueWidth();
    checkLength("query", query, keyLength, n, "heads * keyDim", shape.keyWidth());
    checkLength("key", key, keyLength, n, "heads * keyDim", shape.keyWidth());
    checkLength("value", value, valueLength, n, "heads * valueDim", shape.valueWidth());
    checkLength("out", out, valueLength, n, "heads * valueDim", shape.valueWidth());
    if (weights != null) {
      long needed = pattern.entryCount() * shape.heads();
      if (weights.length != needed) {
        throw new IllegalArgumentException(
            "weights must have length entryCount * heads = "
                + pattern.entryCount()
                + " * "
                + shape.heads()
                + " = "
                + needed
                + ", got "
                + weights.length
                + (needed > Integer.MAX_VALUE - 8
                    ? "; that is more than one Java array holds, so weights cannot be requested"
                        + " for this pattern"
                    : ""));
      }
    }
  }

  private static void checkLength(
      String name, float[] array, long expected, int n, String widthName, int width) {
    if (array.length != expected) {
      throw new IllegalArgumentException(
          name
              + " must have length n * "
              + widthName
              + " = "
              + n
              + " * "
              + width
              + " = "
              + expected
              + ", got "
              + array.length);
    }
  }

  /**
   * Rejects an input array that holds NaN or an infinity, with {@link #checkCall}'s message: the
   * array's name, the first bad value, its index, node and offset.
   *
   * @param name the argument's name, for the message
   * @param array input, not modified
   * @param width floats per node in {@code array}, at least 1
   * @throws IllegalArgumentException if an element is NaN or infinite
   */
  public static void checkFinite(String name, float[] array, int width) {
    int i = FiniteScans.preferred().firstNonFinite(array);
    if (i >= 0) {
      throw new IllegalArgumentException(
          name
              + " holds "
              + array[i]
              + " at index "
              + i
              + " (node "
              + i / width
              + ", offset "
              + i % width
              + "); inputs must be finite");
    }
  }
}
