package dev.heed.train.layer;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.train.support.GradientCheck;
import dev.heed.train.support.TestGraphs;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** The masked softmax cross-entropy: its gradient, its value on known inputs, its checks. */
class MaskedSoftmaxCrossEntropyTest {

  @Test
  void gradientMatchesFiniteDifferencesAndIgnoresUnlabelledNodes() {
    long seed = 17;
    Random random = new Random(seed);
    int n = 6;
    int classes = 4;
    double[] logits = TestGraphs.uniform(n * classes, random);
    for (int i = 0; i < logits.length; i++) {
      logits[i] *= 3;
    }
    int[] labels = {0, 3, -1, 2, 1, -1};
    int[] nodes = {0, 1, 3, 4};
    double[] analytic =
        MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, true).gradient();
    double[] numeric =
        GradientCheck.numeric(
            logits,
            () -> MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, false).loss());
    double error = GradientCheck.relativeError(analytic, numeric);
    assertTrue(error < 1e-6, "seed " + seed + ": relative error " + error);
    for (int c = 0; c < classes; c++) {
      assertEquals(0.0, analytic[2 * classes + c], "unlabelled node 2 must get no gradient");
    }
  }

  /** With equal logits the loss is log(classes) (softmax of equal scores is uniform). */
  @Test
  void equalLogitsGiveLogOfClassCount() {
    double[] logits = new double[3 * 5];
    java.util.Arrays.fill(logits, 0.7);
    MaskedSoftmaxCrossEntropy.Result r =
        MaskedSoftmaxCrossEntropy.evaluate(logits, 5, new int[] {1, 2, 3}, new int[] {0, 2}, false);
    assertEquals(Math.log(5), r.loss(), 1e-12);
    assertEquals(2, r.count());
  }

  @Test
  void rejectsAnUnlabelledNodeInTheSet() {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                MaskedSoftmaxCrossEntropy.evaluate(
                    new double[4], 2, new int[] {0, -1}, new int[] {1}, false));
    assertTrue(e.getMessage().contains("node 1"), e.getMessage());
  }
}
