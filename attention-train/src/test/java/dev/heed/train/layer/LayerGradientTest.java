package dev.heed.train.layer;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.model.Activation;
import dev.heed.train.TrainingNetwork;
import dev.heed.train.attention.AttentionScore;
import dev.heed.train.attention.Float64AttentionForward;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.support.GradientCheck;
import dev.heed.train.support.TestGraphs;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.SplittableRandom;
import java.util.function.DoubleSupplier;
import java.util.function.Supplier;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Every layer's backward pass (parameters and input) against central finite differences of its
 * float64 forward pass, with dropout on (the same masks in every pass: the dropout random source is
 * re-created from one seed for each pass). Loss L = Σ R ⊙ y for a random R.
 */
class LayerGradientTest {

  private static final double TOLERANCE = 1e-4;

  static Stream<Arguments> layers() {
    return Stream.of(
        Arguments.of(
            "GAT concat ELU bias projected-residual dropout",
            (Supplier<TrainingLayer>)
                () ->
                    GraphAttentionTrainingLayer.builder(5, 3, 2)
                        .activation(Activation.ELU)
                        .residual(true)
                        .inputDropout(0.3)
                        .attentionDropout(0.3)
                        .build(),
            false),
        Arguments.of(
            "GAT mean identity identity-residual",
            (Supplier<TrainingLayer>)
                () ->
                    GraphAttentionTrainingLayer.builder(4, 3, 4)
                        .headMerge(HeadMerge.MEAN)
                        .activation(Activation.IDENTITY)
                        .residual(true)
                        .build(),
            false),
        Arguments.of(
            "GATv2 concat ELU no-bias dropout",
            (Supplier<TrainingLayer>)
                () ->
                    GraphAttentionTrainingLayer.builder(5, 2, 3)
                        .score(AttentionScore.Kind.GATV2)
                        .bias(false)
                        .inputDropout(0.2)
                        .attentionDropout(0.4)
                        .build(),
            false),
        Arguments.of(
            "GATv2 mean identity projected-residual",
            (Supplier<TrainingLayer>)
                () ->
                    GraphAttentionTrainingLayer.builder(5, 2, 3)
                        .score(AttentionScore.Kind.GATV2)
                        .headMerge(HeadMerge.MEAN)
                        .activation(Activation.IDENTITY)
                        .residual(true)
                        .build(),
            false),
        Arguments.of(
            "GAT over the complete pattern",
            (Supplier<TrainingLayer>) () -> GraphAttentionTrainingLayer.builder(3, 2, 2).build(),
            true),
        Arguments.of(
            "self-attention ELU residual dropout (CSR)",
            (Supplier<TrainingLayer>)
                () ->
                    SelfAttentionTrainingLayer.builder(6, 2, 3, 2, 6)
                        .activation(Activation.ELU)
                        .residual(true)
                        .inputDropout(0.2)
                        .attentionDropout(0.3)
                        .build(),
            false),
        Arguments.of(
            "self-attention identity projected-residual (complete)",
            (Supplier<TrainingLayer>)
                () ->
                    SelfAttentionTrainingLayer.builder(5, 2, 2, 3, 4)
                        .activation(Activation.IDENTITY)
                        .residual(true)
                        .build(),
            true),
        Arguments.of(
            "dense ELU bias dropout",
            (Supplier<TrainingLayer>)
                () ->
                    DenseTrainingLayer.builder(5, 4)
                        .activation(Activation.ELU)
                        .inputDropout(0.3)
                        .build(),
            false),
        Arguments.of(
            "dense identity no-bias",
            (Supplier<TrainingLayer>)
                () ->
                    DenseTrainingLayer.builder(5, 4)
                        .activation(Activation.IDENTITY)
                        .bias(false)
                        .build(),
            false));
  }

  @ParameterizedTest(name = "{0}")
  @MethodSource("layers")
  void gradientsMatchFiniteDifferences(
      String name, Supplier<TrainingLayer> factory, boolean complete) {
    long seed = 4242 + name.hashCode();
    Random random = new Random(seed);
    int n = 8;
    AttentionPattern pattern =
        complete ? CompletePattern.of(n) : TestGraphs.random(n, 0.35, 5, random);
    TrainingLayer layer = factory.get();
    layer.initialize(new SplittableRandom(seed));
    // non-zero biases, so that their effect is exercised
    for (Parameter p : layer.parameters()) {
      if (p.name().equals("bias")) {
        double[] b = TestGraphs.uniform(p.size(), random);
        System.arraycopy(b, 0, p.value(), 0, b.length);
      }
    }
    double[] input = TestGraphs.uniform(n * layer.inputWidth(), random);
    double[] r = TestGraphs.uniform(n * layer.outputWidth(), random);
    Float64AttentionForward attention = new Float64AttentionForward();
    long dropoutSeed = seed + 1;
    DoubleSupplier loss =
        () ->
            GradientCheck.dot(
                r,
                layer.forward(
                    input,
                    PassContext.training(pattern, attention, new SplittableRandom(dropoutSeed))));

    for (Parameter p : layer.parameters()) {
      p.clearGradient();
    }
    layer.forward(
        input, PassContext.training(pattern, attention, new SplittableRandom(dropoutSeed)));
    double[] dInput = layer.backward(r);
    String where = name + " seed " + seed;
    check("input of " + where, dInput, GradientCheck.numeric(input, loss));
    for (Parameter p : layer.parameters()) {
      double[] analytic = p.gradient().clone();
      check(p.name() + " of " + where, analytic, GradientCheck.numeric(p.value(), loss));
    }
  }

  /**
   * Masked softmax cross-entropy composed with a two-layer GAT: the whole network's gradient
   * against finite differences (nodes outside the training set must not contribute).
   */
  @ParameterizedTest(name = "GAT network, score {0}")
  @MethodSource("networkScores")
  void networkWithLossMatchesFiniteDifferences(AttentionScore.Kind kind) {
    long seed = 31 + kind.ordinal();
    Random random = new Random(seed);
    int n = 9;
    AttentionPattern pattern = TestGraphs.random(n, 0.3, -1, random);
    TrainingNetwork network =
        TrainingNetwork.of(
            GraphAttentionTrainingLayer.builder(4, 2, 3)
                .score(kind)
                .inputDropout(0.2)
                .attentionDropout(0.2)
                .build(),
            GraphAttentionTrainingLayer.builder(6, 2, 3)
                .score(kind)
                .headMerge(HeadMerge.MEAN)
                .activation(Activation.IDENTITY)
                .attentionDropout(0.2)
                .build());
    network.initialize(new SplittableRandom(seed));
    double[] features = TestGraphs.uniform(n * 4, random);
    int[] labels = new int[n];
    for (int i = 0; i < n; i++) {
      labels[i] = random.nextInt(3);
    }
    int[] trainNodes = {0, 2, 3, 7};
    Float64AttentionForward attention = new Float64AttentionForward();
    DoubleSupplier loss =
        () ->
            MaskedSoftmaxCrossEntropy.evaluate(
                    network.forward(
                        features,
                        PassContext.training(pattern, attention, new SplittableRandom(seed + 9))),
                    3,
                    labels,
                    trainNodes,
                    false)
                .loss();
    network.clearGradients();
    double[] logits =
        network.forward(
            features, PassContext.training(pattern, attention, new SplittableRandom(seed + 9)));
    double[] logitGradient =
        MaskedSoftmaxCrossEntropy.evaluate(logits, 3, labels, trainNodes, true).gradient();
    double[] dFeatures = network.backward(logitGradient, true);
    check(
        "features (" + kind + ", seed " + seed + ")",
        dFeatures,
        GradientCheck.numeric(features, loss));
    List<double[]> withFeatureGradient = new ArrayList<>();
    for (Parameter p : network.parameters()) {
      double[] analytic = p.gradient().clone();
      withFeatureGradient.add(analytic);
      check(
          p.name() + " (" + kind + ", seed " + seed + ")",
          analytic,
          GradientCheck.numeric(p.value(), loss));
    }
    // the training path skips the feature gradient and must give the same parameter gradients
    network.clearGradients();
    network.forward(
        features, PassContext.training(pattern, attention, new SplittableRandom(seed + 9)));
    assertNull(network.backward(logitGradient, false));
    for (int i = 0; i < withFeatureGradient.size(); i++) {
      assertArrayEquals(withFeatureGradient.get(i), network.parameters().get(i).gradient(), 0.0);
    }
  }

  /**
   * Training runs its forward pass through the float32 serving kernel: the gradients it gets must
   * agree with those of the float64 equations to float32 accuracy (here attention-core's reference
   * kernel stands in for the serving kernel).
   */
  @ParameterizedTest(name = "score {0}")
  @MethodSource("networkScores")
  void gradientsThroughTheFloat32KernelAgreeWithFloat64(AttentionScore.Kind kind) {
    long seed = 57 + kind.ordinal();
    Random random = new Random(seed);
    int n = 10;
    AttentionPattern pattern = TestGraphs.random(n, 0.3, 4, random);
    GraphAttentionTrainingLayer layer =
        GraphAttentionTrainingLayer.builder(5, 3, 4).score(kind).residual(true).build();
    layer.initialize(new SplittableRandom(seed));
    double[] input = TestGraphs.uniform(n * 5, random);
    double[] r = TestGraphs.uniform(n * layer.outputWidth(), random);
    double[][] gradients = new double[2][];
    int at = 0;
    for (dev.heed.train.attention.AttentionForward attention :
        List.of(
            new Float64AttentionForward(),
            new KernelAttentionForward(new ReferenceAttentionKernel()))) {
      for (Parameter p : layer.parameters()) {
        p.clearGradient();
      }
      layer.forward(input, PassContext.evaluation(pattern, attention));
      double[] dInput = layer.backward(r);
      List<Double> all = new ArrayList<>();
      for (double d : dInput) {
        all.add(d);
      }
      for (Parameter p : layer.parameters()) {
        for (double d : p.gradient()) {
          all.add(d);
        }
      }
      gradients[at++] = all.stream().mapToDouble(Double::doubleValue).toArray();
    }
    double error = GradientCheck.relativeError(gradients[1], gradients[0]);
    assertTrue(error < 1e-5, kind + " seed " + seed + ": relative error " + error);
  }

  static Stream<AttentionScore.Kind> networkScores() {
    return Stream.of(AttentionScore.Kind.ADDITIVE, AttentionScore.Kind.GATV2);
  }

  private static void check(String what, double[] analytic, double[] numeric) {
    double error = GradientCheck.relativeError(analytic, numeric);
    assertTrue(error < TOLERANCE, what + ": relative error " + error);
  }
}
