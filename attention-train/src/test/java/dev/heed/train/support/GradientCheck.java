package dev.heed.train.support;

import java.util.function.DoubleSupplier;

/** Central finite differences in float64, and the norm-wise relative error used to compare. */
public final class GradientCheck {

  private GradientCheck() {}

  /** Step of the central differences; truncation error O(h²) ≈ 1e-10 relative (common practice). */
  public static final double STEP = 1e-5;

  /**
   * Returns the central-difference gradient of {@code loss} with respect to every element of {@code
   * x}, perturbing {@code x} in place and restoring it exactly.
   */
  public static double[] numeric(double[] x, DoubleSupplier loss) {
    double[] g = new double[x.length];
    for (int i = 0; i < x.length; i++) {
      double saved = x[i];
      x[i] = saved + STEP;
      double plus = loss.getAsDouble();
      x[i] = saved - STEP;
      double minus = loss.getAsDouble();
      x[i] = saved;
      g[i] = (plus - minus) / (2 * STEP);
    }
    return g;
  }

  /** max |a − b| / max |b|: a norm-wise relative error, meaningful when some entries are ~0. */
  public static double relativeError(double[] analytic, double[] numeric) {
    if (analytic.length != numeric.length) {
      throw new AssertionError("length " + analytic.length + " != " + numeric.length);
    }
    double diff = 0;
    double scale = 0;
    for (int i = 0; i < analytic.length; i++) {
      diff = Math.max(diff, Math.abs(analytic[i] - numeric[i]));
      scale = Math.max(scale, Math.abs(numeric[i]));
    }
    if (scale == 0) {
      throw new AssertionError("numeric gradient is all zero; the check would prove nothing");
    }
    return diff / scale;
  }

  /** Returns {@code Σ a_i b_i}. */
  public static double dot(double[] a, double[] b) {
    double s = 0;
    for (int i = 0; i < a.length; i++) {
      s += a[i] * b[i];
    }
    return s;
  }
}
