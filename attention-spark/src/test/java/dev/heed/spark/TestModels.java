package dev.heed.spark;

import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.model.DenseLayer;
import dev.heed.model.GraphAttentionLayer;
import dev.heed.model.SelfAttentionLayer;
import dev.heed.model.SoftmaxLayer;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/** Seeded random models for the distributed-versus-single-machine checks. */
final class TestModels {

  private TestModels() {}

  static List<String> names(int width) {
    List<String> names = new ArrayList<>();
    for (int c = 0; c < width; c++) {
      names.add("f" + c);
    }
    return names;
  }

  static List<String> labels(int classes) {
    List<String> labels = new ArrayList<>();
    for (int c = 0; c < classes; c++) {
      labels.add("class" + c);
    }
    return labels;
  }

  /** GAT (8 heads × 8, concatenated, ELU, bias), then GATv2 (4 heads, mean), then softmax. */
  static AttentionModel gatThenGatv2(long seed, int inputs, int classes) {
    SplittableRandom r = new SplittableRandom(seed);
    GraphAttentionLayer hidden =
        GraphAttentionLayer.gat("hidden", inputs, 8, 8)
            .weight(random(r, inputs * 64, 0.5))
            .targetAttention(random(r, 64, 0.5))
            .sourceAttention(random(r, 64, 0.5))
            .bias(random(r, 64, 0.1))
            .activation(Activation.ELU)
            .build();
    GraphAttentionLayer output =
        GraphAttentionLayer.gatv2("output", 64, 4, classes)
            .targetWeight(random(r, 64 * 4 * classes, 0.3))
            .sourceWeight(random(r, 64 * 4 * classes, 0.3))
            .attention(random(r, 4 * classes, 0.5))
            .concatenateHeads(false)
            .build();
    return AttentionModel.of(
        List.of(hidden, output, SoftmaxLayer.of("probabilities", classes)),
        labels(classes),
        names(inputs));
  }

  /** Graph-masked self-attention (2 heads, post-norm, residual), a dense layer, softmax. */
  static AttentionModel graphMaskedSelfAttention(long seed, int inputs, int classes) {
    SplittableRandom r = new SplittableRandom(seed);
    SelfAttentionLayer block =
        SelfAttentionLayer.builder("block", inputs, 2, 4, 3)
            .queryWeight(random(r, inputs * 8, 0.5))
            .keyWeight(random(r, inputs * 8, 0.5))
            .valueWeight(random(r, inputs * 6, 0.5))
            .outputWeight(random(r, 6 * inputs, 0.5))
            .normalization(SelfAttentionLayer.Normalization.POST, 1e-5)
            .attentionNorm(random(r, inputs, 1), random(r, inputs, 0.1))
            .build();
    DenseLayer dense =
        DenseLayer.builder("dense", inputs, classes)
            .weight(random(r, inputs * classes, 0.5))
            .bias(random(r, classes, 0.1))
            .build();
    return AttentionModel.of(
        List.of(block, dense, SoftmaxLayer.of("probabilities", classes)),
        labels(classes),
        names(inputs));
  }

  /** Full self-attention: the distributed classifier must refuse it. */
  static AttentionModel completeSelfAttention(long seed, int inputs, int classes) {
    SplittableRandom r = new SplittableRandom(seed);
    SelfAttentionLayer block =
        SelfAttentionLayer.builder("everyone", inputs, 1, 4, 4)
            .attendToAllNodes(true)
            .queryWeight(random(r, inputs * 4, 0.5))
            .keyWeight(random(r, inputs * 4, 0.5))
            .valueWeight(random(r, inputs * 4, 0.5))
            .outputWeight(random(r, 4 * inputs, 0.5))
            .build();
    DenseLayer dense =
        DenseLayer.builder("dense", inputs, classes)
            .weight(random(r, inputs * classes, 0.5))
            .build();
    return AttentionModel.of(
        List.of(block, dense, SoftmaxLayer.of("probabilities", classes)),
        labels(classes),
        names(inputs));
  }

  static float[] random(SplittableRandom r, int n, double scale) {
    float[] a = new float[n];
    for (int i = 0; i < n; i++) {
      a[i] = (float) ((r.nextDouble() * 2 - 1) * scale);
    }
    return a;
  }
}
