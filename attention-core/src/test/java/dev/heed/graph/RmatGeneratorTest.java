package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.generate.RmatGenerator;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

class RmatGeneratorTest {

  @Test
  void sizesFollowScaleAndEdgeFactor() {
    RmatGenerator gen = RmatGenerator.withScale(10);
    assertEquals(1024, gen.nodeCount());
    assertEquals(16 * 1024, gen.edgeCount()); // Graph500 edge factor 16
    assertEquals(3 * 1024, gen.edgeFactor(3).edgeCount());
    assertEquals(77, gen.edgeCount(77).edgeCount());
  }

  @Test
  void deterministicPerSeedAndIdsInRange() {
    int[] s1 = new int[50_000];
    int[] t1 = new int[50_000];
    int[] s2 = new int[50_000];
    int[] t2 = new int[50_000];
    RmatGenerator gen = RmatGenerator.withScale(14).edgeCount(50_000).seed(9);
    gen.generateInto(s1, t1);
    gen.generateInto(s2, t2);
    assertArrayEquals(s1, s2);
    assertArrayEquals(t1, t2);
    assertTrue(Arrays.stream(s1).allMatch(v -> v >= 0 && v < 1 << 14));
    assertTrue(Arrays.stream(t1).allMatch(v -> v >= 0 && v < 1 << 14));
    RmatGenerator.withScale(14).edgeCount(50_000).seed(10).generateInto(s2, t2);
    assertFalse(Arrays.equals(s1, s2), "another seed gives other edges");
  }

  /**
   * R-MAT model (Chakrabarti et al. 2004): at each level the source bit is 1 with probability C + D
   * and the target bit with probability B + D, independently per level. Without scrambling, the top
   * bit of each id shows it: 0.24 for the Graph500 initiator.
   */
  @Test
  void quadrantFrequenciesMatchTheInitiator() {
    int e = 200_000;
    int scale = 12;
    int[] s = new int[e];
    int[] t = new int[e];
    RmatGenerator.withScale(scale).edgeCount(e).scrambleIds(false).seed(3).generateInto(s, t);
    for (int bit = 0; bit < scale; bit++) {
      int mask = 1 << bit;
      double sourceHigh = Arrays.stream(s).filter(v -> (v & mask) != 0).count() / (double) e;
      double targetHigh = Arrays.stream(t).filter(v -> (v & mask) != 0).count() / (double) e;
      // binomial standard error sqrt(0.24 * 0.76 / 2e5) ~ 0.001; allow 5 sigma
      assertEquals(0.19 + 0.05, sourceHigh, 0.005, "seed 3, source bit " + bit);
      assertEquals(0.19 + 0.05, targetHigh, 0.005, "seed 3, target bit " + bit);
    }
  }

  /**
   * The R-MAT model predicts a heavy-tailed (power-law-like) degree distribution (Chakrabarti et
   * al. 2004): the largest in-degree is far above the mean, unlike an Erdős–Rényi graph of the same
   * size whose maximum stays within a small factor of the mean.
   */
  @Test
  void degreeDistributionIsHeavyTailed() {
    CsrGraph g =
        RmatGenerator.withScale(14)
            .seed(17)
            .generateEdges()
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    GraphStatistics stats = GraphStatistics.of(g);
    assertTrue(
        stats.maxDegree() > 20 * stats.meanDegree(),
        "seed 17: max " + stats.maxDegree() + " vs mean " + stats.meanDegree());
    assertTrue(stats.medianDegree() < stats.meanDegree(), "seed 17: median below mean: " + stats);
    assertTrue(stats.minDegree() == 0, "seed 17: some nodes receive no edge: " + stats);
  }

  @Test
  void scramblingIsABijectionThatKeepsTheDegreeSequence() {
    int e = 40_000;
    int[] s = new int[e];
    int[] t = new int[e];
    int[] ps = new int[e];
    int[] pt = new int[e];
    RmatGenerator.withScale(11).edgeCount(e).seed(8).scrambleIds(false).generateInto(s, t);
    RmatGenerator.withScale(11).edgeCount(e).seed(8).scrambleIds(true).generateInto(ps, pt);
    int[] map = new int[1 << 11];
    Arrays.fill(map, -1);
    for (int k = 0; k < e; k++) {
      for (int[] pair : new int[][] {{s[k], ps[k]}, {t[k], pt[k]}}) {
        assertTrue(map[pair[0]] == -1 || map[pair[0]] == pair[1], "seed 8: consistent relabel");
        map[pair[0]] = pair[1];
      }
    }
    assertEquals(
        Arrays.stream(map).filter(v -> v >= 0).count(),
        Arrays.stream(map).filter(v -> v >= 0).distinct().count(),
        "seed 8: relabelling is one-to-one");
  }

  @Test
  void argumentsValidated() {
    assertThrows(IllegalArgumentException.class, () -> RmatGenerator.withScale(31));
    assertThrows(IllegalArgumentException.class, () -> RmatGenerator.withScale(-1));
    assertThrows(
        IllegalArgumentException.class,
        () -> RmatGenerator.withScale(4).initiator(0.5, 0.2, 0.2, 0.2));
    assertThrows(
        IllegalArgumentException.class,
        () -> RmatGenerator.withScale(4).initiator(Double.NaN, 0.5, 0.25, 0.25));
    assertThrows(IllegalArgumentException.class, () -> RmatGenerator.withScale(30).edgeFactor(16));
    assertThrows(
        IllegalArgumentException.class,
        () -> RmatGenerator.withScale(4).generateInto(new int[3], new int[64]));
  }
}
