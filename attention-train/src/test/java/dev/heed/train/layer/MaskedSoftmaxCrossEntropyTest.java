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

  /** Class-weighted loss: gradient against finite differences; weights of 1 change nothing. */
  @Test
  void weightedGradientMatchesFiniteDifferences() {
    long seed = 23;
    Random random = new Random(seed);
    int n = 8;
    int classes = 3;
    double[] logits = TestGraphs.uniform(n * classes, random);
    int[] labels = {0, 0, 0, 1, 2, 0, 1, -1};
    int[] nodes = {0, 1, 2, 3, 4, 5, 6};
    double[] weights = {0.5, 2.0, 4.0};
    double[] analytic =
        MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, true, weights)
            .gradient();
    double[] numeric =
        GradientCheck.numeric(
            logits,
            () ->
                MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, false, weights)
                    .loss());
    double error = GradientCheck.relativeError(analytic, numeric);
    assertTrue(error < 1e-6, "seed " + seed + ": relative error " + error);
    MaskedSoftmaxCrossEntropy.Result plain =
        MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, true);
    MaskedSoftmaxCrossEntropy.Result ones =
        MaskedSoftmaxCrossEntropy.evaluate(
            logits, classes, labels, nodes, true, new double[] {1, 1, 1});
    assertEquals(plain.loss(), ones.loss(), 0.0);
    assertTrue(java.util.Arrays.equals(plain.gradient(), ones.gradient()));
    assertEquals(plain.accuracy(), ones.weightedAccuracy(), 0.0);
  }

  /** With inverse-frequency weights the weighted accuracy is the mean per-class recall. */
  @Test
  void inverseFrequencyWeightsGiveBalancedAccuracy() {
    // predictions: class 0 for nodes 0-4 (labels 0,0,0,1,2), class 1 for node 5 (label 1)
    int classes = 3;
    int[] labels = {0, 0, 0, 1, 2, 1};
    double[] logits = new double[6 * classes];
    for (int i = 0; i < 5; i++) {
      logits[i * classes] = 1;
    }
    logits[5 * classes + 1] = 1;
    int[] nodes = {0, 1, 2, 3, 4, 5};
    double[] weights = {1.0 / 3, 1.0 / 2, 1.0};
    MaskedSoftmaxCrossEntropy.Result r =
        MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, nodes, false, weights);
    // recalls: class 0 3/3, class 1 1/2, class 2 0/1; mean 0.5
    assertEquals(0.5, r.weightedAccuracy(), 1e-12);
    assertEquals(4.0 / 6, r.accuracy(), 1e-12);
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                MaskedSoftmaxCrossEntropy.evaluate(
                    logits, classes, labels, nodes, false, new double[] {1, 0, 1}));
    assertTrue(e.getMessage().contains("class weight 1 is 0.0"), e.getMessage());
  }
}
