package dev.heed.attention;

import java.util.Arrays;

/**
 * Fits one regime's coefficients to measured times: least squares on relative errors, each
 * coefficient kept at or above 0, and pulled weakly towards a prior (the built-in coefficient) so
 * that a term the measurements cannot tell apart from another keeps its prior value instead of an
 * arbitrary one (ridge regression towards a prior, common practice).
 *
 * <p>In variables x_j = c_j / prior_j, it minimises Σ_i (Σ_j f_ij·prior_j·x_j / t_i − 1)² + λ·Σ_j
 * (x_j − 1)² over x ≥ 0, by an active set: solve the normal equations over the free variables, pin
 * the most negative one to 0, and repeat (Lawson &amp; Hanson 1974, ch. 23, simplified for a
 * handful of variables).
 *
 * <p>Thread safety: stateless.
 */
final class CostFit {

  /** Weight of the prior against one measurement's relative error. */
  static final double PRIOR_WEIGHT = 1e-3;

  private CostFit() {}

  /**
   * Fits coefficients.
   *
   * @param features one row of work terms per measurement (not modified)
   * @param seconds measured seconds per row, positive (not modified)
   * @param prior the prior coefficients, positive (not modified)
   * @return the coefficients, each at least 0
   */
  static double[] fit(double[][] features, double[] seconds, double[] prior) {
    int m = prior.length;
    for (double p : prior) {
      if (!(p > 0)) {
        throw new IllegalArgumentException(
            "prior coefficients must be positive: " + Arrays.toString(prior));
      }
    }
    double[][] ata = new double[m][m];
    double[] atb = new double[m];
    for (int i = 0; i < features.length; i++) {
      if (!(seconds[i] > 0)) {
        throw new IllegalArgumentException("measured seconds must be positive, got " + seconds[i]);
      }
      double[] a = new double[m];
      for (int j = 0; j < m; j++) {
        a[j] = features[i][j] * prior[j] / seconds[i];
      }
      for (int j = 0; j < m; j++) {
        atb[j] += a[j];
        for (int k = 0; k < m; k++) {
          ata[j][k] += a[j] * a[k];
        }
      }
    }
    for (int j = 0; j < m; j++) {
      ata[j][j] += PRIOR_WEIGHT;
      atb[j] += PRIOR_WEIGHT;
    }
    boolean[] pinned = new boolean[m];
    double[] x = new double[m];
    for (int round = 0; round <= m; round++) {
      x = solveFree(ata, atb, pinned);
      int worst = -1;
      for (int j = 0; j < m; j++) {
        if (!pinned[j] && x[j] < 0 && (worst < 0 || x[j] < x[worst])) {
          worst = j;
        }
      }
      if (worst < 0) {
        break;
      }
      pinned[worst] = true;
    }
    double[] c = new double[m];
    for (int j = 0; j < m; j++) {
      c[j] = pinned[j] ? 0 : Math.max(0, x[j]) * prior[j];
    }
    return c;
  }

  /** Solves the normal equations over the variables not pinned to 0 (Gaussian elimination). */
  private static double[] solveFree(double[][] ata, double[] atb, boolean[] pinned) {
    int m = atb.length;
    int[] free = new int[m];
    int k = 0;
    for (int j = 0; j < m; j++) {
      if (!pinned[j]) {
        free[k++] = j;
      }
    }
    double[][] a = new double[k][k + 1];
    for (int r = 0; r < k; r++) {
      for (int c = 0; c < k; c++) {
        a[r][c] = ata[free[r]][free[c]];
      }
      a[r][k] = atb[free[r]];
    }
    for (int col = 0; col < k; col++) {
      int pivot = col;
      for (int r = col + 1; r < k; r++) {
        if (Math.abs(a[r][col]) > Math.abs(a[pivot][col])) {
          pivot = r;
        }
      }
      double[] t = a[col];
      a[col] = a[pivot];
      a[pivot] = t;
      for (int r = col + 1; r < k; r++) {
        double f = a[r][col] / a[col][col];
        for (int c = col; c <= k; c++) {
          a[r][c] -= f * a[col][c];
        }
      }
    }
    double[] y = new double[k];
    for (int r = k - 1; r >= 0; r--) {
      double s = a[r][k];
      for (int c = r + 1; c < k; c++) {
        s -= a[r][c] * y[c];
      }
      y[r] = s / a[r][r];
    }
    double[] x = new double[m];
    for (int r = 0; r < k; r++) {
      x[free[r]] = y[r];
    }
    return x;
  }
}
