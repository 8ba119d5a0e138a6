package dev.heed.attention.internal;

/**
 * Finds the first element of an array that is NaN or infinite: the kernels' front-door check of
 * their inputs, which reads every input float once per call (on a large sparse layer about a tenth
 * of the call, measured). Internal, not API.
 *
 * <p>Thread safety: implementations are stateless.
 */
public interface FiniteScan {

  /**
   * Returns the index of the first element of {@code values} that is NaN or infinite.
   *
   * @param values input, not modified
   * @return the smallest index {@code i} with {@code !Float.isFinite(values[i])}, or -1 if every
   *     element is finite
   */
  int firstNonFinite(float[] values);

  /**
   * Returns whether every element of {@code values[from..to-1]} is finite; the plain loop unless an
   * implementation has a faster one.
   *
   * @param values input, not modified
   * @param from first index to look at
   * @param to one past the last index to look at
   * @return true if no element in the range is NaN or infinite
   */
  default boolean isFinite(float[] values, int from, int to) {
    return firstNonFinite(values, from, to) < 0;
  }

  /**
   * The plain loop, and the reference the vector form must agree with.
   *
   * @param values input, not modified
   * @param from first index to look at
   * @param to one past the last index to look at
   * @return the smallest index {@code i} in {@code from..to-1} with {@code
   *     !Float.isFinite(values[i])}, or -1
   */
  static int firstNonFinite(float[] values, int from, int to) {
    for (int i = from; i < to; i++) {
      if (!Float.isFinite(values[i])) {
        return i;
      }
    }
    return -1;
  }
}
