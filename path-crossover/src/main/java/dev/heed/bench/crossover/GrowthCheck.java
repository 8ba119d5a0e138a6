package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.TreeMap;

/**
 * A check of the expected growth of each path's time (common practice: dense time grows roughly
 * with n² at fixed density, sparse time roughly with the edge count E). It fits a least-squares
 * line to log(time) against log(n) for the dense path (the median over densities at each n, since
 * dense work does not depend on density) and against log(E) for the sparse path, and compares the
 * slope with the expected 2 and 1. Small problems are dominated by fixed per-call costs, so slopes
 * over a range that starts small come out lower than expected.
 *
 * <p>Thread safety: immutable.
 *
 * @param score the score
 * @param path the path
 * @param slope the fitted slope, or NaN if fewer than two distinct x values were measured
 * @param expected the expected slope (2 for dense against n, 1 for sparse against E)
 * @param points how many (x, time) pairs the fit used
 */
public record GrowthCheck(
    SweepScore score, ComputePath path, double slope, double expected, int points) {

  /**
   * Fits the slope for one score and path.
   *
   * @param score the score
   * @param path the path
   * @param sweep all sweep points (others are ignored)
   * @return the check
   */
  public static GrowthCheck fit(SweepScore score, ComputePath path, List<SweepPoint> sweep) {
    List<double[]> xy = new ArrayList<>();
    if (path == ComputePath.DENSE) {
      Map<Integer, List<Double>> byN = new TreeMap<>();
      for (SweepPoint p : sweep) {
        if (p.score() == score && p.path() == path && p.measured()) {
          byN.computeIfAbsent(p.n(), k -> new ArrayList<>()).add(p.timing().medianNanos());
        }
      }
      for (Map.Entry<Integer, List<Double>> e : byN.entrySet()) {
        double[] times = e.getValue().stream().mapToDouble(Double::doubleValue).toArray();
        xy.add(new double[] {Math.log(e.getKey()), Math.log(PointTimer.quantile(times, 0.5))});
      }
    } else {
      for (SweepPoint p : sweep) {
        if (p.score() == score && p.path() == path && p.measured() && p.edges() > 0) {
          xy.add(new double[] {Math.log(p.edges()), Math.log(p.timing().medianNanos())});
        }
      }
    }
    return new GrowthCheck(
        score, path, slope(xy), path == ComputePath.DENSE ? 2.0 : 1.0, xy.size());
  }

  /**
   * Returns the least-squares slope of y on x, or NaN if x takes fewer than two distinct values.
   *
   * @param xy pairs {@code {x, y}}
   * @return the slope
   */
  static double slope(List<double[]> xy) {
    int m = xy.size();
    if (m < 2) {
      return Double.NaN;
    }
    double mx = 0;
    double my = 0;
    for (double[] p : xy) {
      mx += p[0];
      my += p[1];
    }
    mx /= m;
    my /= m;
    double sxx = 0;
    double sxy = 0;
    for (double[] p : xy) {
      sxx += (p[0] - mx) * (p[0] - mx);
      sxy += (p[0] - mx) * (p[1] - my);
    }
    return sxx > 0 ? sxy / sxx : Double.NaN;
  }

  /**
   * Returns the check in words.
   *
   * @return for example {@code "dense, time vs n: log-log slope 1.84 over 4 n (expected about 2)"}
   */
  public String describe() {
    String against = path == ComputePath.DENSE ? "time vs n" : "time vs E";
    String what = path == ComputePath.DENSE ? " n" : " points";
    if (Double.isNaN(slope)) {
      return String.format(
          Locale.ROOT,
          "%s, %s: not enough points to fit (%d)",
          path.name().toLowerCase(Locale.ROOT),
          against,
          points);
    }
    return String.format(
        Locale.ROOT,
        "%s, %s: log-log slope %.2f over %d%s (expected about %.0f)",
        path.name().toLowerCase(Locale.ROOT),
        against,
        slope,
        points,
        what,
        expected);
  }
}
