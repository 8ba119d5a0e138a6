package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ComputePath;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The log-log slope fit on made-up times that follow n² and E exactly. */
class GrowthCheckTest {

  private static SweepPoint point(int n, double density, long edges, ComputePath path, double ns) {
    TimingResult t = new TimingResult(ns, ns, ns, ns, ns, 3, 5, true);
    return new SweepPoint(
        SweepScore.ADDITIVE, n, density, edges, path, t, Double.NaN, Double.NaN, "", "");
  }

  @Test
  void recoversTheExponents() {
    List<SweepPoint> points = new ArrayList<>();
    for (int n : new int[] {256, 1024, 4096}) {
      for (double d : new double[] {0.01, 0.1}) {
        long e = Math.round(d * n * n);
        points.add(point(n, d, e, ComputePath.DENSE, 3.0 * n * n));
        points.add(point(n, d, e, ComputePath.SPARSE, 40.0 * e));
      }
    }
    GrowthCheck dense = GrowthCheck.fit(SweepScore.ADDITIVE, ComputePath.DENSE, points);
    GrowthCheck sparse = GrowthCheck.fit(SweepScore.ADDITIVE, ComputePath.SPARSE, points);
    assertEquals(2.0, dense.slope(), 1e-9);
    assertEquals(3, dense.points());
    assertEquals(1.0, sparse.slope(), 1e-9);
    assertEquals(6, sparse.points());
    assertTrue(dense.describe().contains("slope 2.00"), dense.describe());
  }

  @Test
  void tooFewPointsSaySo() {
    List<SweepPoint> points = List.of(point(256, 0.1, 6554, ComputePath.DENSE, 1e6));
    GrowthCheck g = GrowthCheck.fit(SweepScore.ADDITIVE, ComputePath.DENSE, points);
    assertTrue(Double.isNaN(g.slope()));
    assertTrue(g.describe().contains("not enough points"), g.describe());
  }
}
