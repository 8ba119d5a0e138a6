package dev.heed.attention.internal;

/**
 * Multiplies a small block of rows by a weight matrix: the layers' projections that stay in Java
 * (all of them without a plugged-in {@link MatrixProduct}, and those too small for one). On a
 * targeted query most of the time goes here: the first layer projects every node of the receptive
 * field. Internal, not API.
 *
 * <p>Thread safety: implementations are stateless.
 */
public interface RowProjector {

  /**
   * Adds {@code x · w} to {@code y}: x holds n rows of {@code in} values, w is in × out, y holds n
   * rows of {@code out} values, all row-major. Each output is summed over k in increasing order
   * from y's starting value, so the result depends only on the operands, never on how rows are
   * blocked. O(n·in·out).
   *
   * @param x input rows, not modified, at least n·in values (only the first n rows are read)
   * @param n rows, at least 0
   * @param in columns of x and rows of w, at least 1
   * @param w weights, not modified, length in·out
   * @param out columns of w and of y, at least 1
   * @param y accumulated into, at least n·out values
   */
  void multiplyAdd(float[] x, int n, int in, float[] w, int out, float[] y);

  /**
   * Plain Java: four rows at a time, so that each loaded weight feeds four outputs, in a loop over
   * the columns that the JIT vectorises. Multiply, then add (never fused), as written.
   *
   * @param x input rows, not modified
   * @param n rows
   * @param in columns of x and rows of w
   * @param w weights, not modified
   * @param out columns of w and of y
   * @param y accumulated into
   */
  static void multiplyAddPlain(float[] x, int n, int in, float[] w, int out, float[] y) {
    int i = 0;
    for (; i + 4 <= n; i += 4) {
      int x0 = i * in;
      int y0 = i * out;
      int y1 = y0 + out;
      int y2 = y1 + out;
      int y3 = y2 + out;
      for (int k = 0; k < in; k++) {
        float a0 = x[x0 + k];
        float a1 = x[x0 + in + k];
        float a2 = x[x0 + 2 * in + k];
        float a3 = x[x0 + 3 * in + k];
        int wRow = k * out;
        for (int j = 0; j < out; j++) {
          float wv = w[wRow + j];
          y[y0 + j] += a0 * wv;
          y[y1 + j] += a1 * wv;
          y[y2 + j] += a2 * wv;
          y[y3 + j] += a3 * wv;
        }
      }
    }
    for (; i < n; i++) {
      int xRow = i * in;
      int yRow = i * out;
      for (int k = 0; k < in; k++) {
        float a = x[xRow + k];
        int wRow = k * out;
        for (int j = 0; j < out; j++) {
          y[yRow + j] += a * w[wRow + j];
        }
      }
    }
  }
}
