package dev.heed.examples;

import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import dev.heed.npy.NpyArray;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.SplittableRandom;

/**
 * A small, untrained model for the examples' tests, built in memory with {@link
 * ModelFile#fromParts}: six input features by default (as the demo payments network has), a GAT
 * layer (2 heads of 4, concatenated, ELU), a GATv2 layer (2 heads of 3, averaged) and a softmax
 * over three made-up labels. Its weights are seeded random numbers, so its answers mean nothing;
 * the tests only check that the examples carry them through faithfully. It is not the demo model.
 */
final class TestModel {

  /** The test model's labels, deliberately unlike the demo's. */
  static final String[] LABELS = {"test-alpha", "test-beta", "test-gamma"};

  private TestModel() {}

  static AttentionModel build(long seed) {
    return build(seed, 6);
  }

  static AttentionModel build(long seed, int features) {
    String description =
        """
        {
          "format": "heed-model",
          "format_version": 1,
          "input_features": %d,
          "class_labels": ["test-alpha", "test-beta", "test-gamma"],
          "layers": [
            {"kind": "graph_attention", "name": "gat1", "score": "gat", "heads": 2,
             "head_width": 4, "combine_heads": "concat", "activation": "elu",
             "tensors": {"weight": "gat1.weight", "attention_target": "gat1.attention_target",
                         "attention_source": "gat1.attention_source"}},
            {"kind": "graph_attention", "name": "gat2", "score": "gatv2", "heads": 2,
             "head_width": 3, "combine_heads": "mean",
             "tensors": {"target_weight": "gat2.target_weight",
                         "source_weight": "gat2.source_weight", "attention": "gat2.attention"}},
            {"kind": "softmax", "name": "probabilities"}
          ]
        }
        """
            .formatted(features);
    SplittableRandom random = new SplittableRandom(seed);
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    tensors.put("gat1.weight", gaussian(random, 0.6, features, 8));
    tensors.put("gat1.attention_target", gaussian(random, 1.0, 2, 4));
    tensors.put("gat1.attention_source", gaussian(random, 1.0, 2, 4));
    tensors.put("gat2.target_weight", gaussian(random, 0.5, 8, 6));
    tensors.put("gat2.source_weight", gaussian(random, 0.5, 8, 6));
    tensors.put("gat2.attention", gaussian(random, 1.0, 2, 3));
    try {
      return ModelFile.fromParts(description, tensors);
    } catch (ModelFormatException e) {
      throw new IllegalStateException("the test model's description is wrong", e);
    }
  }

  private static NpyArray gaussian(SplittableRandom random, double scale, int rows, int columns) {
    float[] values = new float[rows * columns];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) (scale * random.nextGaussian());
    }
    return NpyArray.ofFloats(values, rows, columns);
  }
}
