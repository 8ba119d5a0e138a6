package dev.heed.train.check;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.train.EpochProgress;
import dev.heed.train.FullBatchTrainer;
import dev.heed.train.TrainingData;
import dev.heed.train.TrainingNetwork;
import dev.heed.train.TrainingReport;
import dev.heed.train.TrainingSettings;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.layer.DenseTrainingLayer;
import dev.heed.train.layer.GraphAttentionTrainingLayer;
import dev.heed.train.layer.HeadMerge;
import dev.heed.train.layer.MaskedSoftmaxCrossEntropy;
import dev.heed.train.layer.Parameter;
import dev.heed.train.layer.PassContext;
import dev.heed.train.support.ContextualBlockModel;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Training on a contextual stochastic block model (Deshpande et al. 2018): the GAT (Veličković et
 * al. 2018) must beat chance by far and beat a features-only baseline (dense layers, no graph);
 * early stopping keeps the best validation epoch; the same seed gives the same model bit for bit.
 */
class ContextualBlockModelTest {

  private static final Logger LOG = LoggerFactory.getLogger(ContextualBlockModelTest.class);
  private static final long DATA_SEED = 2018;
  private static final int NODES = 300;
  private static final int FEATURES = 30;

  private static ContextualBlockModel.Sample sample;
  private static TrainingData data;
  private static int[] testNodes;
  private static final KernelAttentionForward ATTENTION =
      new KernelAttentionForward(
          // the production kernel (sparse CSR; vector when the test JVM adds the Vector API)
          AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults()));

  @BeforeAll
  static void generate() {
    // average degree 8, λ = 2 (c_in ≈ 13.7, c_out ≈ 2.3), μ = 8: weak features, useful graph
    sample = ContextualBlockModel.generate(NODES, 8, 2, FEATURES, 8, DATA_SEED);
    // 20 labelled nodes per class for training, the next 100 for validation, the rest for test
    List<Integer> train = new ArrayList<>();
    int[] perClass = new int[2];
    List<Integer> validation = new ArrayList<>();
    List<Integer> test = new ArrayList<>();
    for (int i = 0; i < NODES; i++) {
      int label = sample.labels()[i];
      if (perClass[label] < 20) {
        perClass[label]++;
        train.add(i);
      } else if (validation.size() < 100) {
        validation.add(i);
      } else {
        test.add(i);
      }
    }
    data =
        TrainingData.of(
            sample.graph(),
            FEATURES,
            sample.features(),
            2,
            sample.labels(),
            train.stream().mapToInt(Integer::intValue).toArray(),
            validation.stream().mapToInt(Integer::intValue).toArray());
    testNodes = test.stream().mapToInt(Integer::intValue).toArray();
  }

  static TrainingNetwork gat() {
    return TrainingNetwork.of(
        GraphAttentionTrainingLayer.builder(FEATURES, 8, 8)
            .activation(Activation.ELU)
            .inputDropout(0.5)
            .attentionDropout(0.5)
            .build(),
        GraphAttentionTrainingLayer.builder(64, 1, 2)
            .headMerge(HeadMerge.MEAN)
            .activation(Activation.IDENTITY)
            .inputDropout(0.5)
            .attentionDropout(0.5)
            .build());
  }

  static TrainingNetwork featuresOnly() {
    return TrainingNetwork.of(
        DenseTrainingLayer.builder(FEATURES, 64)
            .activation(Activation.ELU)
            .inputDropout(0.5)
            .build(),
        DenseTrainingLayer.builder(64, 2)
            .activation(Activation.IDENTITY)
            .inputDropout(0.5)
            .build());
  }

  static TrainingSettings settings(long seed, int epochs) {
    return TrainingSettings.builder()
        .learningRate(0.01)
        .maxEpochs(epochs)
        .patience(50)
        .seed(seed)
        .build();
  }

  private static double testAccuracy(TrainingNetwork network) {
    double[] logits =
        network.forward(data.features(), PassContext.evaluation(data.pattern(), ATTENTION));
    return MaskedSoftmaxCrossEntropy.evaluate(logits, 2, data.labels(), testNodes, false)
        .accuracy();
  }

  /**
   * Deshpande et al. 2018: the graph carries label information the features lack, so a model that
   * reads the graph must beat one that reads only the features; chance is 50 %.
   */
  @Test
  void gatBeatsChanceAndTheFeaturesOnlyBaseline() {
    long seed = 7;
    List<EpochProgress> history = new ArrayList<>();
    TrainingNetwork gat = gat();
    TrainingReport gatReport =
        FullBatchTrainer.withForward(ATTENTION).train(gat, data, settings(seed, 300), history::add);
    TrainingNetwork mlp = featuresOnly();
    TrainingReport mlpReport =
        FullBatchTrainer.withForward(ATTENTION).train(mlp, data, settings(seed, 300), p -> {});
    double gatAccuracy = testAccuracy(gat);
    double mlpAccuracy = testAccuracy(mlp);
    LOG.info(
        "CSBM n={} seed {}: GAT test accuracy {}, features-only {}; GAT {}; features-only {}",
        NODES,
        seed,
        gatAccuracy,
        mlpAccuracy,
        gatReport,
        mlpReport);
    String where = "data seed " + DATA_SEED + ", training seed " + seed;
    assertTrue(gatAccuracy >= 0.8, where + ": GAT test accuracy " + gatAccuracy);
    assertTrue(
        gatAccuracy >= mlpAccuracy + 0.1,
        where + ": GAT " + gatAccuracy + " vs features-only " + mlpAccuracy);

    // early stopping kept the epoch with the best validation accuracy the listener saw
    double bestSeen =
        history.stream().mapToDouble(EpochProgress::validationAccuracy).max().orElse(0);
    assertEquals(bestSeen, gatReport.validationAccuracy(), 0.0, where);
    assertEquals(history.size(), gatReport.epochs(), where);
    assertTrue(gatReport.bestEpoch() >= 1 && gatReport.bestEpoch() <= gatReport.epochs(), where);
    assertEquals(
        history.get(gatReport.bestEpoch() - 1).validationAccuracy(),
        gatReport.validationAccuracy(),
        0.0,
        where);
  }

  /** Same seed, same data: the same parameters bit for bit; another seed: different ones. */
  @Test
  void sameSeedGivesTheSameModelBitForBit() {
    double[][] first = trainBriefly(11);
    double[][] second = trainBriefly(11);
    double[][] other = trainBriefly(12);
    boolean anyDifferent = false;
    for (int p = 0; p < first.length; p++) {
      assertArrayEquals(first[p], second[p], 0.0, "parameter " + p + " differs between runs");
      anyDifferent |= !java.util.Arrays.equals(first[p], other[p]);
    }
    assertTrue(anyDifferent, "seeds 11 and 12 gave the same parameters");
  }

  private static double[][] trainBriefly(long seed) {
    TrainingNetwork network = gat();
    FullBatchTrainer.withForward(ATTENTION).train(network, data, settings(seed, 15), p -> {});
    List<Parameter> params = network.parameters();
    double[][] values = new double[params.size()][];
    for (int p = 0; p < values.length; p++) {
      values[p] = params.get(p).value().clone();
    }
    AttentionModel exported = network.toModel(List.of("block-a", "block-b"));
    assertEquals(2, exported.layers().size() - 1, "two trained layers, then the softmax head");
    assertFalse(values[0].length == 0);
    return values;
  }
}
