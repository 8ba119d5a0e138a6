package dev.heed.attention;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The coefficient fit, on times made from known coefficients (never on measured timings). */
class CostFitTest {

  /** Within 10 %: the weak pull towards the prior biases the estimate a little. */
  @Test
  void recoversKnownCoefficientsFromExactTimes() {
    SplittableRandom r = new SplittableRandom(42);
    double[] truth = {2e-5, 3e-8, 4e-9, 7e-10};
    double[] prior = {1e-4, 1e-7, 1e-9, 1e-9};
    int rows = 24;
    double[][] f = new double[rows][];
    double[] t = new double[rows];
    for (int i = 0; i < rows; i++) {
      // sizes spread over orders of magnitude, so that each term dominates some rows
      double n = Math.floor(Math.pow(10, 1 + 4 * r.nextDouble()));
      double e = n * Math.floor(Math.pow(10, 2.5 * r.nextDouble()));
      double width = 2 + r.nextInt(128);
      f[i] = new double[] {1, n, e, e * width};
      t[i] = dot(f[i], truth);
    }
    double[] fitted = CostFit.fit(f, t, prior);
    for (int j = 0; j < truth.length; j++) {
      assertEquals(truth[j], fitted[j], truth[j] * 0.1, "coefficient " + j);
    }
  }

  @Test
  void aTermNoMeasurementExercisesKeepsItsPrior() {
    double[] prior = {1e-4, 5e-9, 3e-9};
    double[][] f = {{1, 1000, 0}, {1, 50_000, 0}, {1, 200_000, 0}};
    double[] t = new double[3];
    for (int i = 0; i < 3; i++) {
      t[i] = 2e-4 + 1e-8 * f[i][1];
    }
    double[] fitted = CostFit.fit(f, t, prior);
    assertEquals(prior[2], fitted[2], 1e-15);
    assertEquals(1e-8, fitted[1], 1e-8 * 0.02);
  }

  @Test
  void coefficientsNeverGoNegative() {
    // times that fall with n would need a negative per-row cost; the fit pins it to 0 instead
    double[][] f = {{1, 100}, {1, 1000}, {1, 10_000}};
    double[] t = {3e-3, 2e-3, 1e-3};
    double[] fitted = CostFit.fit(f, t, new double[] {1e-3, 1e-7});
    assertEquals(0.0, fitted[1]);
    assertTrue(fitted[0] > 1e-3 && fitted[0] < 3e-3, "fixed " + fitted[0]);
  }

  private static double dot(double[] a, double[] b) {
    double s = 0;
    for (int i = 0; i < a.length; i++) {
      s += a[i] * b[i];
    }
    return s;
  }
}
