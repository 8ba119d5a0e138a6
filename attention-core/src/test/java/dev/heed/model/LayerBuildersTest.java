package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.util.List;
import java.util.Random;
import java.util.function.Supplier;
import org.junit.jupiter.api.Test;

/**
 * Layers built in Java with the typed builders and {@link AttentionModel#of} are the layers a model
 * file describes: rebuilding every layer of the NumPy-exported fixture from its tensors gives the
 * same file, byte for byte, and the same outputs. The builders reject what the reader rejects, with
 * messages that name the layer and tensor.
 */
class LayerBuildersTest {

  private static float[] v(Layer layer, String role) {
    return layer.tensorValues(role);
  }

  /** The fixture's six layers (see make_model_fixture.py), rebuilt from their tensors. */
  private static List<Layer> rebuild(List<Layer> read) {
    Layer g1 = read.get(0);
    Layer g2 = read.get(1);
    Layer full = read.get(2);
    Layer masked = read.get(3);
    Layer out = read.get(4);
    return List.of(
        GraphAttentionLayer.gat("gat1", 5, 3, 4)
            .weight(v(g1, "weight"))
            .targetAttention(v(g1, "attention_target"))
            .sourceAttention(v(g1, "attention_source"))
            .bias(v(g1, "bias"))
            .linearResidual(v(g1, "residual_weight"))
            .activation(Activation.ELU)
            .build(),
        GraphAttentionLayer.gatv2("gat2", 12, 2, 6)
            .targetWeight(v(g2, "target_weight"))
            .sourceWeight(v(g2, "source_weight"))
            .attention(v(g2, "attention"))
            .leakyReluSlope(0.1)
            .activation(Activation.RELU)
            .identityResidual()
            .build(),
        SelfAttentionLayer.builder("full", 12, 3, 4, 4)
            .attendToAllNodes(true)
            .queryWeight(v(full, "query_weight"))
            .keyWeight(v(full, "key_weight"))
            .valueWeight(v(full, "value_weight"))
            .outputWeight(v(full, "output_weight"))
            .queryBias(v(full, "query_bias"))
            .keyBias(v(full, "key_bias"))
            .valueBias(v(full, "value_bias"))
            .outputBias(v(full, "output_bias"))
            .normalization(SelfAttentionLayer.Normalization.POST, 1e-5)
            .attentionNorm(v(full, "attention_norm_scale"), v(full, "attention_norm_shift"))
            .feedForward(
                16,
                Activation.RELU,
                v(full, "feed_forward_weight1"),
                v(full, "feed_forward_weight2"))
            .feedForwardBiases(v(full, "feed_forward_bias1"), v(full, "feed_forward_bias2"))
            .feedForwardNorm(v(full, "feed_forward_norm_scale"), v(full, "feed_forward_norm_shift"))
            .build(),
        SelfAttentionLayer.builder("masked", 12, 2, 5, 6)
            .queryWeight(v(masked, "query_weight"))
            .keyWeight(v(masked, "key_weight"))
            .valueWeight(v(masked, "value_weight"))
            .outputWeight(v(masked, "output_weight"))
            .normalization(SelfAttentionLayer.Normalization.PRE, 1e-3)
            .attentionNorm(v(masked, "attention_norm_scale"), v(masked, "attention_norm_shift"))
            .feedForward(
                8,
                Activation.ELU,
                v(masked, "feed_forward_weight1"),
                v(masked, "feed_forward_weight2"))
            .feedForwardNorm(
                v(masked, "feed_forward_norm_scale"), v(masked, "feed_forward_norm_shift"))
            .build(),
        GraphAttentionLayer.gat("out", 12, 2, 3)
            .concatenateHeads(false)
            .weight(v(out, "weight"))
            .targetAttention(v(out, "attention_target"))
            .sourceAttention(v(out, "attention_source"))
            .bias(v(out, "bias"))
            .build(),
        SoftmaxLayer.of("probabilities", 3));
  }

  @Test
  void buildersRebuildTheFixtureByteForByteWithTheSameOutputs() throws IOException {
    AttentionModel read = TestModels.load(TestModels.resource("mixed.heed"));
    AttentionModel built =
        AttentionModel.of(rebuild(read.layers()), read.classLabels(), read.featureNames());
    CheckVectors checks = read.checks().orElseThrow();
    assertTrue(checks.compareWithReference(built).withinTolerance(), "the exporter's checks");
    assertArrayEquals(ModelFile.toBytes(read), ModelFile.toBytes(built.withChecks(checks)));

    CsrGraph graph = TestModels.fixtureGraph();
    float[] features = TestModels.npyResource("features.npy").toFloats();
    float[] expected =
        TestModels.withReferenceKernel(read)
            .forward(graph, features, PathChoice.SPARSE, false)
            .values();
    float[] actual =
        TestModels.withReferenceKernel(built)
            .forward(graph, features, PathChoice.SPARSE, false)
            .values();
    assertArrayEquals(expected, actual);
  }

  @Test
  void suppliedArraysAreCopied() {
    Random random = new Random(31);
    float[] weight = randomValues(random, 4 * 3);
    float[] original = weight.clone();
    DenseLayer layer = DenseLayer.builder("d", 4, 3).weight(weight).build();
    weight[0] += 1f;
    assertArrayEquals(original, layer.tensorValues("weight"));
    layer.tensorValues("weight")[1] += 1f;
    assertArrayEquals(original, layer.tensorValues("weight"));
    assertArrayEquals(new int[] {4, 3}, layer.tensorShape("weight"));
    assertEquals(List.of("weight"), layer.tensorRoles());
  }

  private static float[] randomValues(Random random, int size) {
    float[] values = new float[size];
    for (int i = 0; i < size; i++) {
      values[i] = (float) random.nextGaussian();
    }
    return values;
  }

  private static void assertRejected(Supplier<?> build, String... fragments) {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, build::get);
    for (String f : fragments) {
      assertTrue(e.getMessage().contains(f), "expected '" + f + "' in: " + e.getMessage());
    }
  }

  @Test
  void layerBuildersRejectWhatAFileMayNotHold() {
    Random random = new Random(32);
    float[] w = randomValues(random, 4 * 6);
    float[] a = randomValues(random, 2 * 3);
    assertRejected(
        () -> GraphAttentionLayer.gat("g", 4, 2, 3).weight(w).targetAttention(a).build(),
        "graph_attention layer 'g'",
        "missing tensor role 'attention_source'");
    assertRejected(
        () ->
            GraphAttentionLayer.gat("g", 4, 2, 3)
                .weight(randomValues(random, 23))
                .targetAttention(a)
                .sourceAttention(a)
                .build(),
        "tensor 'g.weight' (role weight)",
        "23 values, expected 24");
    float[] nan = a.clone();
    nan[4] = Float.NaN;
    assertRejected(
        () ->
            GraphAttentionLayer.gat("g", 4, 2, 3)
                .weight(w)
                .targetAttention(a)
                .sourceAttention(nan)
                .build(),
        "tensor 'g.attention_source'",
        "NaN at flat index 4");
    assertRejected(
        () ->
            GraphAttentionLayer.gatv2("g", 4, 2, 3)
                .targetWeight(w)
                .sourceWeight(w)
                .attention(a)
                .weight(w)
                .build(),
        "tensor role 'weight' is not used");
    assertRejected(
        () ->
            GraphAttentionLayer.gat("g", 4, 2, 3)
                .weight(w)
                .targetAttention(a)
                .sourceAttention(a)
                .identityResidual()
                .build(),
        "residual 'identity' needs input width = output width, got 4 and 6");
    assertRejected(
        () ->
            GraphAttentionLayer.gat("g", 4, 2, 3)
                .weight(w)
                .targetAttention(a)
                .sourceAttention(a)
                .leakyReluSlope(1.0)
                .build(),
        "leaky_relu_slope must be a number in [0.0, 1.0), got 1.0");
    assertRejected(() -> DenseLayer.builder("d", 0, 3).build(), "input width must be at least 1");
    assertRejected(() -> SoftmaxLayer.of("", 3), "name must not be empty");
    assertRejected(
        () ->
            SelfAttentionLayer.builder("s", 4, 1, 2, 2)
                .queryWeight(randomValues(random, 8))
                .keyWeight(randomValues(random, 8))
                .valueWeight(randomValues(random, 8))
                .outputWeight(randomValues(random, 8))
                .outputBias(randomValues(random, 4))
                .build(),
        "self_attention layer 's'",
        "missing tensor role 'query_bias'");
  }

  @Test
  void modelOfRejectsStacksThatDoNotFit() {
    Random random = new Random(33);
    DenseLayer d43 = DenseLayer.builder("d", 4, 3).weight(randomValues(random, 12)).build();
    SoftmaxLayer p3 = SoftmaxLayer.of("p", 3);
    List<String> labels = List.of("ordinary", "merchant", "mule-ring");
    AttentionModel ok = AttentionModel.of(List.of(d43, p3), labels, List.of());
    assertEquals(4, ok.inputFeatureCount());
    assertRejected(
        () -> AttentionModel.of(List.of(d43), labels, List.of()), "must be a softmax layer");
    assertRejected(
        () -> AttentionModel.of(List.of(d43, SoftmaxLayer.of("p", 4)), labels, List.of()),
        "layer 1 'p' reads 4 features per node but layer 0 'd' writes 3");
    assertRejected(
        () -> AttentionModel.of(List.of(d43, SoftmaxLayer.of("d", 3)), labels, List.of()),
        "duplicate layer name 'd'");
    assertRejected(
        () -> AttentionModel.of(List.of(SoftmaxLayer.of("q", 3), p3), labels, List.of()),
        "a softmax layer must be the last layer");
    assertRejected(
        () -> AttentionModel.of(List.of(d43, p3), List.of("a", "b"), List.of()),
        "3 outputs per node but there are 2 class labels");
    assertRejected(
        () -> AttentionModel.of(List.of(d43, p3), List.of("a", "b", "a"), List.of()),
        "class label 2 repeats 'a'");
    assertRejected(
        () -> AttentionModel.of(List.of(d43, p3), labels, List.of("x", "y")),
        "2 feature names were given but the first layer reads 4");
  }
}
