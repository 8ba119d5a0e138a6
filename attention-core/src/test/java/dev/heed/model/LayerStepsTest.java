package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * A model run step by step (projections, an attention call outside the model, finishing, per-node
 * layers) gives what its whole-graph forward pass gives, since both run the same layer code.
 */
class LayerStepsTest {

  private static float[] stepwise(LayerSteps steps, CsrGraph graph, float[] features, int n) {
    float[] x = features;
    for (int l = 0; l < steps.layerCount(); l++) {
      if (!steps.attends(l)) {
        x = steps.perNode(l, x, n);
        continue;
      }
      LayerSteps.Projections p = steps.project(l, x, n);
      float[] attended = new float[n * steps.shape(l).valueWidth()];
      ReferenceAttention.kernel()
          .attend(
              graph,
              steps.score(l),
              steps.shape(l),
              p.queries(),
              p.keys(),
              p.values(),
              attended,
              null);
      x = steps.finish(l, x, attended, n);
    }
    return x;
  }

  private static CsrGraph randomGraph(SplittableRandom r, int n, int edges) {
    int[] src = new int[edges];
    int[] dst = new int[edges];
    for (int k = 0; k < edges; k++) {
      src[k] = r.nextInt(n);
      dst[k] = r.nextInt(n);
    }
    return CsrGraphBuilder.fromEdges(src, dst, n).build();
  }

  @Test
  void graphAttentionStackStepByStepEqualsTheForwardPass() {
    SplittableRandom r = new SplittableRandom(17);
    int n = 60;
    AttentionModel model = TestModels.withReferenceKernel(RandomModels.gatGatv2Dense(3, 5, 4));
    CsrGraph graph = randomGraph(r, n, 240);
    float[] x = new float[n * 5];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) r.nextGaussian();
    }
    float[] expected = model.forward(graph, x, PathChoice.SPARSE, false).values();
    LayerSteps steps = LayerSteps.of(model);
    assertTrue(
        steps.project(1, new float[steps.model().layers().get(1).inputWidth()], 1).keysAreValues(),
        "GATv2 keys are its values");
    assertArrayEquals(expected, stepwise(steps, graph, x, n));
  }

  @Test
  void graphMaskedSelfAttentionStepByStepEqualsTheForwardPass() {
    SplittableRandom r = new SplittableRandom(5);
    int n = 40;
    AttentionModel model =
        TestModels.withReferenceKernel(
            RandomModels.start(9, 6)
                .selfAttention("block", false)
                .dense("d", 3, "identity")
                .softmax(3));
    CsrGraph graph = randomGraph(r, n, 160);
    float[] x = new float[n * 6];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) r.nextGaussian();
    }
    float[] expected = model.forward(graph, x, PathChoice.SPARSE, false).values();
    assertArrayEquals(expected, stepwise(LayerSteps.of(model), graph, x, n));
  }

  @Test
  void completePatternIsRefusedByName() {
    AttentionModel model =
        RandomModels.start(1, 4)
            .selfAttention("everyone", true)
            .dense("d", 2, "identity")
            .softmax(2);
    IllegalArgumentException e =
        assertThrows(IllegalArgumentException.class, () -> LayerSteps.of(model));
    assertTrue(
        e.getMessage().startsWith("layer 'everyone' (self_attention, pattern complete)"),
        e.getMessage());
  }

  @Test
  void wrongStepForALayerSaysWhichToUse() {
    LayerSteps steps = LayerSteps.of(RandomModels.gatGatv2Dense(3, 5, 4));
    assertEquals(4, steps.layerCount());
    assertTrue(
        assertThrows(IllegalArgumentException.class, () -> steps.perNode(0, new float[5], 1))
            .getMessage()
            .contains("use project and finish"));
    assertTrue(
        assertThrows(IllegalArgumentException.class, () -> steps.project(2, new float[10], 1))
            .getMessage()
            .contains("use perNode"));
    assertTrue(
        assertThrows(IllegalArgumentException.class, () -> steps.project(0, new float[9], 2))
            .getMessage()
            .contains("2 × 5"));
  }
}
