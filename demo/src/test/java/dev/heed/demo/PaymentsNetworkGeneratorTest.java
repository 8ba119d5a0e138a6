package dev.heed.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

class PaymentsNetworkGeneratorTest {

  private static final PaymentsNetwork SMALL =
      PaymentsNetworkGenerator.of(5_000, 50_000, 7L).generate();

  @Test
  void sameSeedGivesSameNetwork() {
    PaymentsNetwork again = PaymentsNetworkGenerator.of(5_000, 50_000, 7L).generate();
    assertArrayEquals(SMALL.transferSources(), again.transferSources());
    assertArrayEquals(SMALL.transferTargets(), again.transferTargets());
    assertArrayEquals(SMALL.features(), again.features());
    assertArrayEquals(SMALL.roles(), again.roles());
  }

  @Test
  void sizesAndRoleSharesAreAsConfigured() {
    assertEquals(5_000, SMALL.accountCount());
    assertEquals(50_000, SMALL.transferCount());
    int[] counts = new int[PaymentsNetwork.ROLES.size()];
    for (int r : SMALL.roles()) {
      counts[r]++;
    }
    assertEquals(400, counts[1]);
    assertEquals(100, counts[2]);
    for (int i = 0; i < SMALL.transferCount(); i++) {
      assertTrue(SMALL.transferSources()[i] != SMALL.transferTargets()[i], "no self-transfers");
    }
  }

  @Test
  void degreesAreHeavyTailed() {
    // Degree-corrected block model with Pareto propensities: the busiest account is far above the
    // mean (common practice for payment and social graphs; the shape is a property of the model).
    int[] in = new int[SMALL.accountCount()];
    for (int t : SMALL.transferTargets()) {
      in[t]++;
    }
    int max = 0;
    for (int d : in) {
      max = Math.max(max, d);
    }
    double mean = (double) SMALL.transferCount() / SMALL.accountCount();
    assertTrue(max > 10 * mean, "max in-degree " + max + " vs mean " + mean);
  }

  @Test
  void featuresAreStandardised() {
    float[] x = SMALL.features();
    int f = SMALL.featureNames().size();
    for (int c = 0; c < f; c++) {
      double mean = 0;
      double sq = 0;
      for (int a = 0; a < SMALL.accountCount(); a++) {
        mean += x[a * f + c];
        sq += (double) x[a * f + c] * x[a * f + c];
      }
      mean /= SMALL.accountCount();
      double var = sq / SMALL.accountCount() - mean * mean;
      assertEquals(0.0, mean, 1e-4, "column " + c);
      assertEquals(1.0, var, 1e-3, "column " + c);
    }
  }
}
