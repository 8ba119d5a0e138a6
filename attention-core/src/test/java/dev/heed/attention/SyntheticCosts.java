package dev.heed.attention;

import dev.heed.attention.internal.CostRegime;
import java.util.EnumMap;
import java.util.Map;

/**
 * Path cost profiles with chosen coefficients, so that tests of the cost model's logic never depend
 * on timings.
 */
public final class SyntheticCosts {

  private SyntheticCosts() {}

  /**
   * A profile where the dense path costs {@code denseFixed + denseElement · n²·H} and every sparse
   * regime {@code sparseFixed + sparseEntry · E·H} (per-head) or {@code sparseEntry · E}
   * (all-heads), every other coefficient 0, calibrated on one thread with parallel efficiency 1.
   *
   * @return the profile
   */
  public static PathCosts linear(
      double denseFixed, double denseElement, double sparseFixed, double sparseEntry) {
    Map<CostRegime, double[]> c = new EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      k[r.terms().indexOf("fixed")] = r == CostRegime.DENSE ? denseFixed : sparseFixed;
      if (r == CostRegime.DENSE) {
        k[r.terms().indexOf("element")] = denseElement;
      } else {
        boolean allHeads =
            r == CostRegime.SPARSE_ALL_HEADS || r == CostRegime.SPARSE_ALL_HEADS_PACKED;
        k[r.terms().indexOf("entry")] =
            allHeads ? CostRegime.ALL_HEADS_HEADS * sparseEntry : sparseEntry;
      }
      c.put(r, k);
    }
    return new PathCosts(c, 1, 1.0, "synthetic", "", null, "synthetic");
  }
}
