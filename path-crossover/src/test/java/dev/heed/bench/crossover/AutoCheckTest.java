package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ComputePath;
import dev.heed.attention.PathCosts;
import dev.heed.attention.SyntheticCosts;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The AUTO check and the noise check on made-up points and synthetic coefficients. */
class AutoCheckTest {

  private static final SweepConfig CONFIG =
      SweepConfig.quickSweep().withNodeCounts(List.of(1000)).withThreads(1);

  /** Sparse faster below density 0.25 (dense 2e-9·n²H, sparse 8e-9·E·H). */
  private static final PathCosts QUARTER = SyntheticCosts.linear(0, 2e-9, 0, 8e-9);

  private static SweepPoint point(double density, ComputePath path, double ms) {
    int n = 1000;
    long edges = Math.round(density * n * n);
    double ns = ms * 1e6;
    TimingResult t = new TimingResult(ns, ns, ns, ns, ns, 3, 5, true);
    return new SweepPoint(SweepScore.DOT_PRODUCT, n, density, edges, path, t, 1, 1, "unit", "");
  }

  @Test
  void aChoiceWithinTenPercentOfTheFasterPathIsAHit() {
    List<SweepPoint> points = new ArrayList<>();
    // density 0.1: the model says sparse; sparse measured faster: hit
    points.add(point(0.1, ComputePath.DENSE, 10));
    points.add(point(0.1, ComputePath.SPARSE, 4));
    // density 0.2: the model says sparse; sparse 5 % slower than dense: still a hit
    points.add(point(0.2, ComputePath.DENSE, 10));
    points.add(point(0.2, ComputePath.SPARSE, 10.5));
    // density 0.5: the model says dense; dense 1.5x slower: a miss
    points.add(point(0.5, ComputePath.DENSE, 15));
    points.add(point(0.5, ComputePath.SPARSE, 10));
    // only one path measured: not compared
    points.add(point(0.3, ComputePath.SPARSE, 10));
    AutoCheck check = AutoCheck.of(CONFIG, points, QUARTER);
    assertEquals(3, check.compared());
    assertEquals(2, check.hits());
    assertEquals(1, check.misses().size());
    assertTrue(check.misses().get(0).contains("density=50 %"), check.misses().get(0));
    assertTrue(check.describe().contains("at 2 of 3 points (66.7 %)"), check.describe());
  }

  @Test
  void aDenseLineThatIsNotFlatFlagsTheMachine() {
    List<SweepPoint> flat =
        List.of(point(0.1, ComputePath.DENSE, 10), point(0.5, ComputePath.DENSE, 11));
    NoiseCheck quiet = NoiseCheck.of(CONFIG, flat, 0.1, 0.2);
    assertTrue(quiet.denseFlat());
    assertTrue(!quiet.noisy(), quiet.describe());
    List<SweepPoint> bent =
        List.of(point(0.1, ComputePath.DENSE, 10), point(0.5, ComputePath.DENSE, 13));
    NoiseCheck noisy = NoiseCheck.of(CONFIG, bent, 0.1, 0.2);
    assertTrue(!noisy.denseFlat());
    assertTrue(noisy.noisy());
    assertTrue(noisy.describe().contains("NOT FLAT"), noisy.describe());
    assertTrue(NoiseCheck.of(CONFIG, flat, 50, 50).noisy(), "a high load average is noise");
  }
}
