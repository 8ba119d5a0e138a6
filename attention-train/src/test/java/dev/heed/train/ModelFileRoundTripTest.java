package dev.heed.train;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.model.CheckVectors;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import dev.heed.model.PathChoice;
import dev.heed.model.TestModels;
import dev.heed.train.attention.AttentionScore;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.layer.DenseTrainingLayer;
import dev.heed.train.layer.GraphAttentionTrainingLayer;
import dev.heed.train.layer.HeadMerge;
import dev.heed.train.layer.PassContext;
import dev.heed.train.layer.SelfAttentionTrainingLayer;
import dev.heed.train.support.ContextualBlockModel;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.function.IntFunction;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.EnumSource;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Train → {@link TrainingNetwork#toModel} (the serving layers' builders) → {@link ModelFile#write}
 * → {@link ModelFile#read} → {@link NodeClassifier}: the served probabilities must equal the
 * trainer's evaluation-mode forward pass (no dropout) followed by a softmax, to 1e-5 norm-wise
 * relative error, on both real kernels. This is what binds the training layers' conventions to the
 * serving layers' (docs/model-format.md): GAT eqs. 1–6 of Veličković et al. 2018 with a = [a_target
 * ‖ a_source], GATv2 (Brody et al. 2022) with values W_source h_j, bias after the head merge,
 * residual before the activation, ELU with α = 1 (Clevert et al. 2016), and Vaswani et al. 2017 eq.
 * 1 for self-attention. A mismatch in any of them moves the probabilities by far more than float32
 * rounding (about 1e-7 relative, IEEE 754).
 */
class ModelFileRoundTripTest {

  private static final Logger LOG = LoggerFactory.getLogger(ModelFileRoundTripTest.class);
  private static final long DATA_SEED = 2026;
  private static final int NODES = 200;
  private static final int FEATURES = 12;
  private static final int CLASSES = 2;
  private static final List<String> LABELS = List.of("block-a", "block-b");

  private static ContextualBlockModel.Sample sample;
  private static TrainingData data;

  @TempDir Path dir;

  @BeforeAll
  static void generate() {
    sample = ContextualBlockModel.generate(NODES, 6, 2, FEATURES, 4, DATA_SEED);
    List<Integer> train = new ArrayList<>();
    List<Integer> validation = new ArrayList<>();
    for (int i = 0; i < NODES; i++) {
      (i % 4 == 0 ? train : i % 4 == 1 ? validation : new ArrayList<Integer>()).add(i);
    }
    data =
        TrainingData.of(
            sample.graph(),
            FEATURES,
            sample.features(),
            CLASSES,
            sample.labels(),
            train.stream().mapToInt(Integer::intValue).toArray(),
            validation.stream().mapToInt(Integer::intValue).toArray());
  }

  /** Networks covering every mapped convention. */
  private static final List<IntFunction<TrainingNetwork>> NETWORKS =
      List.of(
          // GAT paper's transductive shape: 4 x 4 ELU concat, then 2-head mean, identity
          w ->
              TrainingNetwork.of(
                  GraphAttentionTrainingLayer.builder(w, 4, 4)
                      .activation(Activation.ELU)
                      .inputDropout(0.3)
                      .attentionDropout(0.3)
                      .build(),
                  GraphAttentionTrainingLayer.builder(16, 2, CLASSES)
                      .headMerge(HeadMerge.MEAN)
                      .activation(Activation.IDENTITY)
                      .build()),
          // GATv2 with a projected residual and ReLU, identity residual, then a dense head
          w ->
              TrainingNetwork.of(
                  GraphAttentionTrainingLayer.builder(w, 3, 4)
                      .score(AttentionScore.Kind.GATV2)
                      .activation(Activation.RELU)
                      .residual(true)
                      .build(),
                  GraphAttentionTrainingLayer.builder(12, 3, 4)
                      .score(AttentionScore.Kind.ADDITIVE)
                      .activation(Activation.ELU)
                      .residual(true)
                      .bias(false)
                      .build(),
                  DenseTrainingLayer.builder(12, CLASSES).activation(Activation.IDENTITY).build()),
          // self-attention block along the graph between dense layers
          w ->
              TrainingNetwork.of(
                  DenseTrainingLayer.builder(w, 8).activation(Activation.ELU).build(),
                  SelfAttentionTrainingLayer.builder(8, 2, 4, 3, 8).residual(true).build(),
                  DenseTrainingLayer.builder(8, CLASSES)
                      .activation(Activation.IDENTITY)
                      .bias(false)
                      .build()));

  private static AttentionKernel kernel(ComputePath path) {
    return AttentionKernels.forPath(path, KernelOptions.defaults());
  }

  @ParameterizedTest
  @EnumSource(ComputePath.class)
  void servedProbabilitiesEqualTheTrainersForward(ComputePath path) throws IOException {
    AttentionKernel kernel = kernel(path);
    LOG.info("{} path kernel: {}", path, kernel.describe());
    if (path == ComputePath.SPARSE
        && ModuleLayer.boot().findModule("jdk.incubator.vector").isPresent()) {
      // the test JVM adds the Vector API module: the vector kernel must be the one that ran
      assertTrue(
          kernel.describe().contains("vector"), "expected the vector kernel: " + kernel.describe());
    }
    KernelAttentionForward attention = new KernelAttentionForward(kernel);
    for (int k = 0; k < NETWORKS.size(); k++) {
      long seed = 100 + k;
      String where = path + ", network " + k + ", seed " + seed;
      TrainingNetwork network = NETWORKS.get(k).apply(FEATURES);
      FullBatchTrainer.withKernel(kernel)
          .train(
              network,
              data,
              TrainingSettings.builder().learningRate(0.01).maxEpochs(25).seed(seed).build(),
              p -> {});
      double[] logits =
          network.forward(data.features(), PassContext.evaluation(data.pattern(), attention));
      double[] expected = softmax(logits, CLASSES);

      Path file = dir.resolve("network" + k + "-" + path + ".heed");
      ModelFile.write(network.toModel(LABELS, featureNames()), file);
      AttentionModel model = ModelFile.read(file); // compares the trainer's check vectors
      assertEquals(
          TrainingNetwork.CHECKS_COMPUTED_BY, model.checks().orElseThrow().computedBy(), where);
      CheckVectors.Deviation served =
          model
              .checks()
              .orElseThrow()
              .compare(model, path == ComputePath.DENSE ? PathChoice.DENSE : PathChoice.SPARSE);
      LOG.info("{}: check vectors on the serving kernel, {}", where, served.describe("-"));
      assertTrue(served.withinTolerance(), where + ": " + served.describe("-"));
      assertEquals(LABELS, model.classLabels(), where);
      assertEquals(featureNames(), model.featureNames(), where);
      NodeClassifier classifier =
          NodeClassifier.of(
              model,
              ClassifyOptions.defaults()
                  .withPath(path == ComputePath.DENSE ? PathChoice.DENSE : PathChoice.SPARSE));
      List<NodePrediction> predictions =
          classifier
              .classify(sample.graph(), NodeFeatures.ofRowMajor(sample.features(), NODES, FEATURES))
              .predictions();
      double diff = 0;
      double norm = 0;
      for (int i = 0; i < NODES; i++) {
        float[] p = predictions.get(i).probabilities();
        for (int c = 0; c < CLASSES; c++) {
          double d = p[c] - expected[i * CLASSES + c];
          diff += d * d;
          norm += expected[i * CLASSES + c] * expected[i * CLASSES + c];
        }
      }
      double relative = Math.sqrt(diff / norm);
      LOG.info("{}: served vs trainer probabilities, relative error {}", where, relative);
      assertTrue(relative < 1e-5, where + ": relative error " + relative);
    }
  }

  /**
   * A square weight stored transposed (the [out, in] layout of many stacks) has a valid shape, so
   * only the check vectors can catch it: the trainer's float64 evaluation pass (its own layers and
   * {@code Float64AttentionForward}, the equations of Brody et al. 2022 and Veličković et al. 2018
   * written apart from the serving code) computed them before the weight was transposed.
   */
  @Test
  void aTransposedSquareWeightFailsTheTrainersCheckVectors() throws IOException {
    TrainingNetwork network = NETWORKS.get(1).apply(FEATURES); // GATv2 12 -> 3 x 4, then GAT
    FullBatchTrainer.withKernel(kernel(ComputePath.SPARSE))
        .train(network, data, TrainingSettings.builder().maxEpochs(5).seed(9).build(), p -> {});
    byte[] file = ModelFile.toBytes(network.toModel(LABELS));
    AttentionModel good = TestModels.load(file);
    assertTrue(good.checks().isPresent());
    for (String tensor : List.of("layer0.target_weight", "layer0.source_weight", "layer1.weight")) {
      assertArrayEquals(
          new int[] {FEATURES, FEATURES}, shapeOf(good, tensor), tensor + " is square");
      ModelFormatException e =
          assertThrows(
              ModelFormatException.class,
              () -> TestModels.load(TestModels.withTransposed(file, tensor)),
              tensor);
      LOG.info("{} transposed: {}", tensor, e.getMessage());
      assertTrue(e.getMessage().contains("does not reproduce its check vectors"), e.getMessage());
      assertTrue(e.getMessage().contains("largest deviation"), e.getMessage());
      assertTrue(e.getMessage().contains("at check row"), e.getMessage());
      assertTrue(e.getMessage().contains(TrainingNetwork.CHECKS_COMPUTED_BY), e.getMessage());
    }
  }

  private static int[] shapeOf(AttentionModel model, String tensor) {
    int dot = tensor.indexOf('.');
    for (dev.heed.model.Layer layer : model.layers()) {
      if (layer.name().equals(tensor.substring(0, dot))) {
        return layer.tensorShape(tensor.substring(dot + 1));
      }
    }
    throw new AssertionError("no tensor " + tensor);
  }

  @Test
  void writingTwiceGivesTheSameBytes() throws IOException {
    TrainingNetwork network = NETWORKS.get(0).apply(FEATURES);
    FullBatchTrainer.withKernel(kernel(ComputePath.SPARSE))
        .train(network, data, TrainingSettings.builder().maxEpochs(3).seed(5).build(), p -> {});
    Path a = dir.resolve("a.heed");
    Path b = dir.resolve("b.heed");
    ModelFile.write(network.toModel(LABELS), a);
    ModelFile.write(network.toModel(LABELS), b);
    assertTrue(
        java.util.Arrays.equals(
            java.nio.file.Files.readAllBytes(a), java.nio.file.Files.readAllBytes(b)));
  }

  @Test
  void refusesWhatTheFormatCannotHold() {
    TrainingNetwork widening =
        TrainingNetwork.of(
            SelfAttentionTrainingLayer.builder(FEATURES, 2, 4, 4, 6).build(),
            DenseTrainingLayer.builder(6, CLASSES).build());
    IllegalArgumentException e =
        assertThrows(IllegalArgumentException.class, () -> widening.toModel(LABELS, List.of()));
    assertTrue(e.getMessage().contains("output width = input width"), e.getMessage());
    TrainingNetwork ok = NETWORKS.get(0).apply(FEATURES);
    e =
        assertThrows(
            IllegalArgumentException.class,
            () -> ok.toModel(List.of("only-one", "x", "y"), List.of()));
    assertTrue(e.getMessage().contains("2 class outputs but 3 class labels"), e.getMessage());
    e = assertThrows(IllegalArgumentException.class, () -> ok.toModel(List.of("same", "same")));
    assertTrue(e.getMessage().contains("repeats 'same'"), e.getMessage());
  }

  private static List<String> featureNames() {
    List<String> names = new ArrayList<>();
    for (int f = 0; f < FEATURES; f++) {
      names.add("x" + f);
    }
    return names;
  }

  private static double[] softmax(double[] logits, int classes) {
    double[] p = new double[logits.length];
    for (int i = 0; i < logits.length / classes; i++) {
      double max = Double.NEGATIVE_INFINITY;
      for (int c = 0; c < classes; c++) {
        max = Math.max(max, logits[i * classes + c]);
      }
      double sum = 0;
      for (int c = 0; c < classes; c++) {
        p[i * classes + c] = Math.exp(logits[i * classes + c] - max);
        sum += p[i * classes + c];
      }
      for (int c = 0; c < classes; c++) {
        p[i * classes + c] /= sum;
      }
    }
    return p;
  }
}
