package dev.heed.train;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.train.layer.Parameter;
import java.util.List;
import org.junit.jupiter.api.Test;

/** Adam against properties of Kingma &amp; Ba 2015, Algorithm 1. */
class AdamOptimizerTest {

  /**
   * Kingma &amp; Ba 2015, §2.1: after bias correction the first step is lr·g/(|g| + ε), a step of
   * size lr against the sign of the gradient, whatever the gradient's size.
   */
  @Test
  void firstStepHasTheLearningRateAsItsSize() {
    Parameter p = new Parameter("w", false, 3);
    double[] start = {0.5, -2.0, 7.0};
    System.arraycopy(start, 0, p.value(), 0, 3);
    double[] g = {1e-3, -40.0, 2.5};
    System.arraycopy(g, 0, p.gradient(), 0, 3);
    TrainingSettings s = TrainingSettings.builder().learningRate(0.01).weightDecay(0.5).build();
    new AdamOptimizer(List.of(p), s).step();
    for (int i = 0; i < 3; i++) {
      double expected = start[i] - 0.01 * g[i] / (Math.abs(g[i]) + 1e-8);
      assertEquals(expected, p.value()[i], 1e-12, "element " + i);
    }
  }

  /** Weight decay adds λθ to the gradient of decayed parameters (an L2 penalty λ/2·‖θ‖²). */
  @Test
  void weightDecayActsAsAnL2Penalty() {
    Parameter decayed = new Parameter("w", true, 1);
    Parameter plain = new Parameter("b", false, 1);
    decayed.value()[0] = 3.0;
    plain.value()[0] = 3.0;
    // gradient 0 plus λθ = 0.3 > 0 for the decayed one: it must move down; the other must not move
    TrainingSettings s = TrainingSettings.builder().learningRate(0.1).weightDecay(0.1).build();
    new AdamOptimizer(List.of(decayed, plain), s).step();
    assertEquals(3.0 - 0.1 * 0.3 / (0.3 + 1e-8), decayed.value()[0], 1e-12);
    assertEquals(3.0, plain.value()[0], 0.0);
  }

  /** Adam minimizes a convex quadratic (a sanity property of any descent method). */
  @Test
  void minimizesAQuadratic() {
    Parameter p = new Parameter("x", false, 2);
    p.value()[0] = 4;
    p.value()[1] = -3;
    AdamOptimizer adam =
        new AdamOptimizer(
            List.of(p), TrainingSettings.builder().learningRate(0.05).weightDecay(0).build());
    for (int t = 0; t < 2000; t++) {
      // f = (x0 − 1)² + 10 (x1 + 2)²
      p.gradient()[0] = 2 * (p.value()[0] - 1);
      p.gradient()[1] = 20 * (p.value()[1] + 2);
      adam.step();
    }
    assertTrue(
        Math.abs(p.value()[0] - 1) < 1e-2 && Math.abs(p.value()[1] + 2) < 1e-2,
        "ended at " + p.value()[0] + ", " + p.value()[1]);
    assertEquals(2000, adam.steps());
  }
}
