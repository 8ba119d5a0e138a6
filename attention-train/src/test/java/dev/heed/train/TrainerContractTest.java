package dev.heed.train;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.CsrGraph;
import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.model.GraphAttentionLayer;
import dev.heed.model.Layer;
import dev.heed.train.attention.AttentionScore;
import dev.heed.train.layer.DenseTrainingLayer;
import dev.heed.train.layer.GraphAttentionTrainingLayer;
import dev.heed.train.layer.HeadMerge;
import dev.heed.train.layer.Parameter;
import dev.heed.train.layer.SelfAttentionTrainingLayer;
import dev.heed.train.support.TestGraphs;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/** Front-door checks, progress reporting and the export of trained parameters. */
class TrainerContractTest {

  private static TrainingData smallData(long seed) {
    Random random = new Random(seed);
    int n = 12;
    CsrGraph g = TestGraphs.random(n, 0.3, -1, random);
    float[] features = new float[n * 3];
    int[] labels = new int[n];
    for (int i = 0; i < n; i++) {
      labels[i] = i % 2;
      for (int k = 0; k < 3; k++) {
        features[i * 3 + k] = (float) (random.nextGaussian() + (k == 0 ? labels[i] : 0));
      }
    }
    return TrainingData.of(g, 3, features, 2, labels, new int[] {0, 1, 2, 3}, new int[] {4, 5, 6});
  }

  private static TrainingNetwork smallGat() {
    return TrainingNetwork.of(
        GraphAttentionTrainingLayer.builder(3, 2, 4).score(AttentionScore.Kind.GATV2).build(),
        GraphAttentionTrainingLayer.builder(8, 2, 2)
            .headMerge(HeadMerge.MEAN)
            .activation(Activation.IDENTITY)
            .build());
  }

  @Test
  void listenerSeesEveryEpochAndExportMatchesTheParameters() {
    TrainingData data = smallData(3);
    TrainingNetwork network = smallGat();
    List<EpochProgress> seen = new ArrayList<>();
    TrainingReport report =
        FullBatchTrainer.withKernel(new ReferenceAttentionKernel())
            .train(
                network,
                data,
                TrainingSettings.builder().maxEpochs(12).patience(1000).seed(5).build(),
                seen::add);
    assertEquals(12, seen.size());
    for (int e = 0; e < seen.size(); e++) {
      assertEquals(e + 1, seen.get(e).epoch());
      assertTrue(Double.isFinite(seen.get(e).loss()) && seen.get(e).seconds() >= 0);
    }
    assertEquals(12, report.epochs());
    assertFalse(report.stoppedEarly());

    AttentionModel trained = network.toModel(List.of("even", "odd"));
    assertEquals(3, trained.inputFeatureCount());
    assertEquals(2, trained.classLabels().size());
    GraphAttentionLayer first = (GraphAttentionLayer) trained.layers().get(0);
    assertEquals(GraphAttentionLayer.KIND, first.kind());
    assertEquals("gatv2", first.scoreName());
    assertTrue(first.concatenatesHeads());
    assertFalse(((GraphAttentionLayer) trained.layers().get(1)).concatenatesHeads());
    int index = 0;
    for (Layer layer : trained.layers()) {
      for (String role : layer.tensorRoles()) {
        Parameter p = network.parameters().get(index++);
        assertEquals(p.name(), role);
        assertArrayEquals(p.shape(), layer.tensorShape(role));
        float[] expected = new float[p.size()];
        for (int i = 0; i < expected.length; i++) {
          expected[i] = (float) p.value()[i];
        }
        assertArrayEquals(expected, layer.tensorValues(role));
      }
    }
    assertEquals(network.parameters().size(), index);
    assertArrayEquals(new int[] {3, 8}, first.tensorShape("target_weight"));
    assertArrayEquals(new int[] {2, 4}, first.tensorShape("attention"));
  }

  /**
   * Every trainable layer kind learns end to end: the training loss falls well below its start on a
   * small separable problem (a descent property of Adam, Kingma &amp; Ba 2015).
   */
  @Test
  void everyLayerKindLearns() {
    TrainingData data = smallData(9);
    List<TrainingNetwork> networks =
        List.of(
            smallGat(),
            TrainingNetwork.of(
                SelfAttentionTrainingLayer.builder(3, 2, 4, 4, 8)
                    .activation(Activation.ELU)
                    .residual(true)
                    .build(),
                DenseTrainingLayer.builder(8, 2).activation(Activation.IDENTITY).build()),
            TrainingNetwork.of(
                GraphAttentionTrainingLayer.builder(3, 2, 4).residual(true).build(),
                GraphAttentionTrainingLayer.builder(8, 1, 2)
                    .headMerge(HeadMerge.MEAN)
                    .activation(Activation.IDENTITY)
                    .residual(true)
                    .build()));
    for (TrainingNetwork network : networks) {
      List<EpochProgress> seen = new ArrayList<>();
      FullBatchTrainer.withKernel(new ReferenceAttentionKernel())
          .train(
              network,
              data,
              TrainingSettings.builder()
                  .learningRate(0.02)
                  .maxEpochs(150)
                  .patience(1000)
                  .seed(1)
                  .build(),
              seen::add);
      double first = seen.get(0).loss();
      double last = seen.get(seen.size() - 1).loss();
      assertTrue(last < 0.5 * first, network.layers() + ": loss " + first + " -> " + last);
    }
  }

  @Test
  void rejectsANetworkThatDoesNotFitTheData() {
    TrainingData data = smallData(4);
    TrainingNetwork wrongWidth =
        TrainingNetwork.of(
            DenseTrainingLayer.builder(5, 2).activation(Activation.IDENTITY).build());
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                FullBatchTrainer.withKernel(new ReferenceAttentionKernel())
                    .train(wrongWidth, data, TrainingSettings.builder().build(), p -> {}));
    assertTrue(e.getMessage().contains("5") && e.getMessage().contains("3"), e.getMessage());
  }

  @Test
  void rejectsLayersWhoseWidthsDoNotChain() {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                TrainingNetwork.of(
                    GraphAttentionTrainingLayer.builder(3, 2, 4).build(),
                    DenseTrainingLayer.builder(7, 2).build()));
    assertTrue(
        e.getMessage().contains("reads 7") && e.getMessage().contains("writes 8"), e.getMessage());
  }

  @Test
  void trainingDataNamesTheBadNode() {
    CsrGraph g = TestGraphs.random(4, 0.5, -1, new Random(1));
    float[] f = new float[8];
    IllegalArgumentException unlabelled =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                TrainingData.of(g, 2, f, 2, new int[] {0, 1, -1, 1}, new int[] {0, 2}, new int[0]));
    assertTrue(unlabelled.getMessage().contains("node 2"), unlabelled.getMessage());
    IllegalArgumentException overlap =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                TrainingData.of(g, 2, f, 2, new int[] {0, 1, 0, 1}, new int[] {0}, new int[] {0}));
    assertTrue(overlap.getMessage().contains("twice"), overlap.getMessage());
    float[] nan = new float[8];
    nan[5] = Float.NaN;
    IllegalArgumentException notFinite =
        assertThrows(
            IllegalArgumentException.class,
            () -> TrainingData.of(g, 2, nan, 2, new int[] {0, 1, 0, 1}, new int[] {0}, new int[0]));
    assertTrue(notFinite.getMessage().contains("node 2"), notFinite.getMessage());
  }

  @Test
  void buildersRejectOutOfRangeSettings() {
    assertThrows(
        IllegalArgumentException.class,
        () -> GraphAttentionTrainingLayer.builder(3, 2, 4).attentionDropout(1.0).build());
    assertThrows(
        IllegalArgumentException.class,
        () ->
            GraphAttentionTrainingLayer.builder(3, 2, 4)
                .score(AttentionScore.Kind.SCALED_DOT_PRODUCT)
                .build());
    assertThrows(IllegalArgumentException.class, () -> DenseTrainingLayer.builder(0, 2).build());
    assertThrows(
        IllegalArgumentException.class, () -> TrainingSettings.builder().learningRate(0).build());
    assertThrows(
        IllegalArgumentException.class, () -> TrainingSettings.builder().patience(0).build());
  }

  @Test
  void backwardBeforeForwardIsAnError() {
    GraphAttentionTrainingLayer layer = GraphAttentionTrainingLayer.builder(3, 2, 4).build();
    assertThrows(IllegalStateException.class, () -> layer.backward(new double[8]));
  }
}
