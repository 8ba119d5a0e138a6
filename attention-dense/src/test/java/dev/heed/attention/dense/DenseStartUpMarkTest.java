package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.DenseStartUp;
import dev.heed.graph.CompletePattern;
import org.junit.jupiter.api.Test;

/**
 * A dense call records that the dense back end has started, so that models choosing their path with
 * AUTO stop charging its start-up ({@link DenseStartUp}); the flag is JVM-wide, so only its state
 * after a call is checked here.
 */
class DenseStartUpMarkTest {

  @Test
  void aDenseCallMarksTheBackEndStarted() {
    AttentionKernel kernel =
        new DenseAttentionKernelProvider().create(new KernelOptions(1, 64L << 20));
    HeadShape shape = new HeadShape(1, 2, 2);
    float[] q = {0.5f, -1f, 0.25f, 2f, -0.75f, 1.5f};
    float[] v = {1f, 2f, -3f, 0.5f, 4f, -1f};
    float[] out = new float[6];
    kernel.attend(
        CompletePattern.of(3), ScoreFunction.scaledDotProduct(), shape, q, q, v, out, null);
    assertTrue(DenseStartUp.started(), "a dense call must mark the back end started");
  }
}
