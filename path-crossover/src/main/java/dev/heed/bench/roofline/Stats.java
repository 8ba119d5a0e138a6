package dev.heed.bench.roofline;

import java.util.Arrays;

/**
 * Order statistics of small samples, shared by the roofline probes and the crossover runner.
 *
 * <p>Thread safety: stateless.
 */
public final class Stats {

  private Stats() {}

  /**
   * Returns the median of {@code values} (not modified); NaN when empty.
   *
   * @param values the sample
   * @return the median
   */
  public static double median(double[] values) {
    return quantile(values, 0.5);
  }

  /**
   * Returns the {@code q}-quantile of {@code values} (not modified) with linear interpolation
   * between order statistics; NaN when empty.
   *
   * @param values the sample
   * @param q in {@code [0, 1]}
   * @return the quantile
   */
  public static double quantile(double[] values, double q) {
    if (values.length == 0) {
      return Double.NaN;
    }
    double[] sorted = values.clone();
    Arrays.sort(sorted);
    double pos = q * (sorted.length - 1);
    int lo = (int) Math.floor(pos);
    int hi = Math.min(lo + 1, sorted.length - 1);
    return sorted[lo] + (pos - lo) * (sorted[hi] - sorted[lo]);
  }
}
