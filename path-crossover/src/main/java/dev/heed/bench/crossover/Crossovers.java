package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;

/**
 * Finds the crossover density from sweep points.
 *
 * <p>For one score and node count, take the densities where both paths were timed, in increasing
 * order, and the time ratio r = sparse / dense at each. The crossover is where sparse stops being
 * faster: after the highest density with r &lt; 1, the ratio is at least 1 at every measured
 * density. It is interpolated linearly in (log density, log r) between that point and the next, to
 * where log r = 0. If r &lt; 1 at the highest density compared, the crossover lies above the range;
 * if r ≥ 1 everywhere, there is none in range. A ratio that crosses 1 more than once is reported
 * with a remark.
 *
 * <p>Thread safety: stateless.
 */
public final class Crossovers {

  private Crossovers() {}

  /**
   * Finds the crossover for one score and node count.
   *
   * @param score the score
   * @param n the node count
   * @param points sweep points; those of other scores or node counts, and skipped ones, are ignored
   * @return the crossover
   */
  public static Crossover find(SweepScore score, int n, List<SweepPoint> points) {
    Map<Double, double[]> byDensity = new TreeMap<>();
    for (SweepPoint p : points) {
      if (p.score() != score || p.n() != n || !p.measured()) {
        continue;
      }
      double[] pair =
          byDensity.computeIfAbsent(p.actualDensity(), d -> new double[] {Double.NaN, Double.NaN});
      pair[p.path() == ComputePath.DENSE ? 0 : 1] = p.timing().medianNanos();
    }
    List<double[]> rows = new ArrayList<>(); // {density, ratio}
    for (Map.Entry<Double, double[]> e : byDensity.entrySet()) {
      double dense = e.getValue()[0];
      double sparse = e.getValue()[1];
      if (dense > 0 && sparse > 0) {
        rows.add(new double[] {e.getKey(), sparse / dense});
      }
    }
    rows.sort(Comparator.comparingDouble(r -> r[0]));
    Crossover c = fromRatios(score, n, rows);
    if (c.kind() == Crossover.Kind.NOT_MEASURABLE) {
      int dense = 0;
      int sparse = 0;
      for (double[] pair : byDensity.values()) {
        dense += pair[0] > 0 ? 1 : 0;
        sparse += pair[1] > 0 ? 1 : 0;
      }
      String remark;
      if (dense == 0 && sparse == 0) {
        remark = "both paths skipped, see the notes";
      } else if (dense == 0 || sparse == 0) {
        remark =
            (dense == 0 ? "dense" : "sparse") + " path skipped at every density, see the notes";
      } else {
        remark = "the paths were timed at different densities, see the notes";
      }
      return new Crossover(score, n, c.kind(), c.density(), remark);
    }
    return c;
  }

  /**
   * Finds the crossover from (density, sparse/dense time ratio) pairs sorted by density.
   *
   * @param score the score, for the result
   * @param n the node count, for the result
   * @param rows {@code {density, ratio}} pairs, densities increasing and positive, ratios positive
   * @return the crossover
   */
  static Crossover fromRatios(SweepScore score, int n, List<double[]> rows) {
    if (rows.isEmpty()) {
      return new Crossover(score, n, Crossover.Kind.NOT_MEASURABLE, Double.NaN, "");
    }
    int lastSparseFaster = -1;
    int signChanges = 0;
    for (int i = 0; i < rows.size(); i++) {
      if (rows.get(i)[1] < 1) {
        lastSparseFaster = i;
      }
      if (i > 0 && (rows.get(i)[1] < 1) != (rows.get(i - 1)[1] < 1)) {
        signChanges++;
      }
    }
    String remark =
        signChanges > 1
            ? "time ratio crosses 1 "
                + signChanges
                + " times (noisy or non-monotone); reported the highest crossing"
            : "";
    if (lastSparseFaster < 0) {
      return new Crossover(
          score, n, Crossover.Kind.DENSE_FASTER_EVERYWHERE, rows.get(0)[0], remark);
    }
    if (lastSparseFaster == rows.size() - 1) {
      return new Crossover(
          score, n, Crossover.Kind.SPARSE_FASTER_EVERYWHERE, rows.get(rows.size() - 1)[0], remark);
    }
    double[] a = rows.get(lastSparseFaster);
    double[] b = rows.get(lastSparseFaster + 1);
    double xa = Math.log(a[0]);
    double xb = Math.log(b[0]);
    double ya = Math.log(a[1]);
    double yb = Math.log(b[1]);
    // ya < 0 <= yb, so yb - ya > 0 and the crossing lies in [xa, xb]
    double x = xa + (0 - ya) * (xb - xa) / (yb - ya);
    return new Crossover(score, n, Crossover.Kind.FOUND, Math.exp(x), remark);
  }
}
