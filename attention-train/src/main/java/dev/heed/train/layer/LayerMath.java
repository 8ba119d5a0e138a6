package dev.heed.train.layer;

import java.util.SplittableRandom;

/**
 * Plain float64 matrix helpers for the layers: row-major, single-threaded, fixed summation order
 * (so results are bit-reproducible). Internal: callers pass valid shapes; only {@code assert}s.
 */
final class LayerMath {

  private LayerMath() {}

  /** Returns {@code A B} for A {@code [rows, inner]} and B {@code [inner, cols]}. */
  static double[] multiply(double[] a, int rows, int inner, double[] b, int cols) {
    assert a.length == rows * inner && b.length == inner * cols;
    double[] c = new double[rows * cols];
    for (int r = 0; r < rows; r++) {
      int cAt = r * cols;
      for (int i = 0; i < inner; i++) {
        double x = a[r * inner + i];
        if (x == 0) {
          continue;
        }
        int bAt = i * cols;
        for (int k = 0; k < cols; k++) {
          c[cAt + k] += x * b[bAt + k];
        }
      }
    }
    return c;
  }

  /**
   * {@code dA += dC Bᵀ} for dC {@code [rows, cols]}, B {@code [inner, cols]}, dA {@code [rows,
   * inner]}.
   */
  static void addTimesTransposed(
      double[] dc, int rows, int cols, double[] b, int inner, double[] da) {
    if (da == null) {
      return; // input gradient not requested
    }
    assert dc.length == rows * cols && b.length == inner * cols && da.length == rows * inner;
    for (int r = 0; r < rows; r++) {
      int dcAt = r * cols;
      for (int i = 0; i < inner; i++) {
        int bAt = i * cols;
        double s = 0;
        for (int k = 0; k < cols; k++) {
          s += dc[dcAt + k] * b[bAt + k];
        }
        da[r * inner + i] += s;
      }
    }
  }

  /**
   * {@code dB += Aᵀ dC} for A {@code [rows, inner]}, dC {@code [rows, cols]}, dB {@code [inner,
   * cols]}.
   */
  static void addTransposedTimes(
      double[] a, int rows, int inner, double[] dc, int cols, double[] db) {
    assert a.length == rows * inner && dc.length == rows * cols && db.length == inner * cols;
    for (int r = 0; r < rows; r++) {
      int dcAt = r * cols;
      for (int i = 0; i < inner; i++) {
        double x = a[r * inner + i];
        if (x == 0) {
          continue;
        }
        int dbAt = i * cols;
        for (int k = 0; k < cols; k++) {
          db[dbAt + k] += x * dc[dcAt + k];
        }
      }
    }
  }

  /** Adds column sums of {@code d [rows, cols]} into {@code sums [cols]}. */
  static void addColumnSums(double[] d, int rows, int cols, double[] sums) {
    for (int r = 0; r < rows; r++) {
      for (int c = 0; c < cols; c++) {
        sums[c] += d[r * cols + c];
      }
    }
  }

  /**
   * Glorot (Xavier) uniform initialization, U(−l, l) with l = √(6 / (fanIn + fanOut)) (Glorot &amp;
   * Bengio, AISTATS 2010, eq. 16).
   */
  static void glorotUniform(Parameter p, int fanIn, int fanOut, SplittableRandom random) {
    double limit = Math.sqrt(6.0 / (fanIn + fanOut));
    double[] v = p.value();
    for (int i = 0; i < v.length; i++) {
      v[i] = (random.nextDouble() * 2 - 1) * limit;
    }
  }

  /** Returns {@code x ⊙ mask}, or {@code x} itself when the mask is null. */
  static double[] masked(double[] x, double[] mask) {
    if (mask == null) {
      return x;
    }
    double[] y = new double[x.length];
    for (int i = 0; i < x.length; i++) {
      y[i] = x[i] * mask[i];
    }
    return y;
  }

  static void checkInput(String layer, double[] input, int n, int width) {
    java.util.Objects.requireNonNull(input, "input");
    if (input.length != (long) n * width) {
      throw new IllegalArgumentException(
          layer
              + " input must have length nodes * inputWidth = "
              + n
              + " * "
              + width
              + " = "
              + (long) n * width
              + ", got "
              + input.length);
    }
  }

  static void checkRate(String name, double rate) {
    if (!(rate >= 0 && rate < 1)) {
      throw new IllegalArgumentException(name + " must be in [0, 1), got " + rate);
    }
  }

  static void checkPositive(String name, int value) {
    if (value < 1) {
      throw new IllegalArgumentException(name + " must be at least 1, got " + value);
    }
  }

  static float[] toFloat(double[] a) {
    float[] f = new float[a.length];
    for (int i = 0; i < a.length; i++) {
      f[i] = (float) a[i];
    }
    return f;
  }

  /** A parameter's values rounded to float32, as a served model holds them. */
  static float[] rounded(Parameter p) {
    return toFloat(p.value());
  }
}
