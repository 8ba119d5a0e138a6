package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.List;
import org.junit.jupiter.api.Test;

/** The crossover search on given (density, sparse/dense ratio) pairs: pure arithmetic. */
class CrossoversTest {

  private static Crossover find(double[][] rows) {
    return Crossovers.fromRatios(SweepScore.DOT_PRODUCT, 1024, List.of(rows));
  }

  @Test
  void interpolatesOnLogScaleBetweenTheBracketingPoints() {
    // ratio 0.5 at 1 %, 2 at 4 %: log r is linear in log d and crosses 0 halfway, at 2 %
    Crossover c = find(new double[][] {{0.001, 0.1}, {0.01, 0.5}, {0.04, 2.0}, {0.1, 8.0}});
    assertEquals(Crossover.Kind.FOUND, c.kind());
    assertEquals(0.02, c.density(), 1e-12);
    assertEquals("", c.remark());
  }

  @Test
  void sparseFasterEverywhereMeansAboveTheRange() {
    Crossover c = find(new double[][] {{0.01, 0.2}, {0.1, 0.9}});
    assertEquals(Crossover.Kind.SPARSE_FASTER_EVERYWHERE, c.kind());
    assertEquals(0.1, c.density());
    assertTrue(c.describe().startsWith("above the range"), c.describe());
  }

  @Test
  void denseFasterEverywhereMeansNoneInRange() {
    Crossover c = find(new double[][] {{0.01, 1.5}, {0.1, 3}});
    assertEquals(Crossover.Kind.DENSE_FASTER_EVERYWHERE, c.kind());
    assertTrue(c.describe().startsWith("none in range"), c.describe());
  }

  @Test
  void noComparablePointIsNotMeasurable() {
    Crossover c = find(new double[][] {});
    assertEquals(Crossover.Kind.NOT_MEASURABLE, c.kind());
    assertTrue(Double.isNaN(c.density()));
  }

  @Test
  void nonMonotoneRatioReportsTheHighestCrossingWithARemark() {
    // sparse faster, slower, faster again, then slower: the last change from < 1 to >= 1 counts
    Crossover c =
        find(new double[][] {{0.001, 0.5}, {0.003, 1.2}, {0.01, 0.8}, {0.03, 1.25}, {0.1, 3}});
    assertEquals(Crossover.Kind.FOUND, c.kind());
    assertTrue(c.density() > 0.01 && c.density() < 0.03, "density " + c.density());
    assertTrue(c.remark().contains("3 times"), c.remark());
  }

  @Test
  void equalTimesCountAsDenseNotSlower() {
    Crossover c = find(new double[][] {{0.01, 0.5}, {0.1, 1.0}});
    assertEquals(Crossover.Kind.FOUND, c.kind());
    assertEquals(0.1, c.density(), 1e-12);
  }
}
