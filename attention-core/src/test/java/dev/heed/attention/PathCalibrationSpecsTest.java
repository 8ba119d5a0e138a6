package dev.heed.attention;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.internal.CostRegime;
import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The calibration's calls exercise every term of every regime; its graphs are as described. */
class PathCalibrationSpecsTest {

  @Test
  void everyTermOfEveryRegimeVariesAcrossTheCalls() {
    for (CostRegime regime : CostRegime.values()) {
      List<double[]> rows = new ArrayList<>();
      for (PathCalibration.Spec spec : PathCalibration.specs()) {
        CostRegime.CallSize size = spec.size(2);
        if (CostRegime.of(spec.path(), size) == regime) {
          rows.add(regime.features(size, 1.0));
        }
      }
      assertTrue(rows.size() >= 3, regime.key() + " has " + rows.size() + " calls");
      for (int t = 0; t < regime.terms().size(); t++) {
        double min = Double.POSITIVE_INFINITY;
        double max = 0;
        for (double[] r : rows) {
          min = Math.min(min, r[t]);
          max = Math.max(max, r[t]);
        }
        String term = regime.key() + "." + regime.terms().get(t);
        assertTrue(max > 0, term + " is never exercised");
        if (t > 0) {
          assertTrue(max > 1.5 * min, term + " does not vary: " + min + ".." + max);
        }
      }
    }
  }

  @Test
  void uniformGraphsHaveTheAskedDegreeAndNoRepeats() {
    CsrGraph g = PathCalibration.uniformGraph(100, 7, 3);
    assertEquals(100, g.nodeCount());
    assertEquals(700, g.edgeCount());
    for (int i = 0; i < 100; i++) {
      assertEquals(7, g.degree(i));
      for (int e = g.rowStart(i) + 1; e < g.rowEnd(i); e++) {
        assertTrue(g.column(e - 1) < g.column(e), "sorted, no repeats in row " + i);
      }
    }
  }
}
