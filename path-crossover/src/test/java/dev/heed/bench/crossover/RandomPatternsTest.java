package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertInstanceOf;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import org.junit.jupiter.api.Test;

/** The sweep's seeded random patterns: exact entry counts, balanced rows, validated CSR. */
class RandomPatternsTest {

  @Test
  void entryCountIsExactAndRowsAreBalanced() {
    long seed = 11;
    // both sampling branches: sparse rows (rejection) and dense rows (selection sampling)
    for (double density : new double[] {0.001, 0.01, 0.1, 0.3, 0.9}) {
      int n = 300;
      AttentionPattern p = RandomPatterns.uniform(n, density, seed);
      long expected = Math.max(1, Math.round(density * n * n));
      assertEquals(expected, p.entryCount(), "density " + density + ", seed " + seed);
      CsrGraph g = assertInstanceOf(CsrGraph.class, p); // CsrGraph.of validated it
      int min = Integer.MAX_VALUE;
      int max = 0;
      for (int i = 0; i < n; i++) {
        min = Math.min(min, g.degree(i));
        max = Math.max(max, g.degree(i));
      }
      assertTrue(max - min <= 1, "rows differ by more than one entry at density " + density);
    }
  }

  @Test
  void sameSeedSameGraphOtherSeedOtherGraph() {
    AttentionPattern a = RandomPatterns.uniform(200, 0.05, 7);
    AttentionPattern b = RandomPatterns.uniform(200, 0.05, 7);
    AttentionPattern c = RandomPatterns.uniform(200, 0.05, 8);
    assertEquals(a, b);
    assertTrue(!a.equals(c), "different seeds gave the same graph");
  }

  @Test
  void fullDensityIsTheCompletePattern() {
    assertEquals(CompletePattern.of(64), RandomPatterns.uniform(64, 1.0, 1));
    assertEquals(64L * 64, RandomPatterns.entryCount(64, 1.0));
  }

  @Test
  void tinyDensityStillHasOneEntry() {
    assertEquals(1, RandomPatterns.uniform(10, 1e-6, 3).entryCount());
  }

  @Test
  void badArgumentsAreRejected() {
    assertThrows(IllegalArgumentException.class, () -> RandomPatterns.uniform(0, 0.1, 1));
    assertThrows(IllegalArgumentException.class, () -> RandomPatterns.uniform(10, 0, 1));
    assertThrows(IllegalArgumentException.class, () -> RandomPatterns.uniform(10, 1.5, 1));
    assertThrows(IllegalArgumentException.class, () -> RandomPatterns.uniform(10, Double.NaN, 1));
  }
}
