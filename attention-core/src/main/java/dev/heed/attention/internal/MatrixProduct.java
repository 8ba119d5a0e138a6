package dev.heed.attention.internal;

/**
 * A fast implementation of large float32 matrix products, plugged in by a kernel module (the dense
 * module supplies BLAS through ND4J) and found with {@link java.util.ServiceLoader}. Without one,
 * the layers compute every product in plain Java. Internal, not API.
 *
 * <p>Thread safety: implementations are safe to call from many threads at once.
 */
public interface MatrixProduct {

  /**
   * Returns {@code x · w}: x is n × in, w is in × out, the result n × out, all row-major.
   *
   * @param x input, not modified, length n·in
   * @param n rows of x, at least 1
   * @param in columns of x and rows of w, at least 1
   * @param w input, not modified, length in·out
   * @param out columns of w, at least 1
   * @return a new array of length n·out
   */
  float[] multiply(float[] x, int n, int in, float[] w, int out);

  /**
   * Says which implementation this is, for logs.
   *
   * @return a short description
   */
  String describe();
}
