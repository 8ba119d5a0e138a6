package dev.heed.cli;

import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import dev.heed.npy.NpyArray;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.stream.Collectors;

/** Models for the live-scoring tests: seeded random weights, so their answers mean nothing. */
final class LiveFixtures {

  private LiveFixtures() {}

  /**
   * Three attention layers, so that hop counts matter: GAT (2 heads of 4, concatenated, ELU), GATv2
   * (2 heads of 3, concatenated, ELU), GAT (one head per label, averaged over 2 heads), softmax.
   */
  static AttentionModel threeLayerModel(List<String> features, List<String> labels, long seed) {
    String description =
        """
        {"format": "heed-model", "format_version": 1, "input_features": %d,
         "feature_names": [%s], "class_labels": [%s],
         "layers": [
          {"kind": "graph_attention", "name": "gat1", "score": "gat", "heads": 2,
           "head_width": 4, "combine_heads": "concat", "activation": "elu",
           "tensors": {"weight": "gat1.weight", "attention_target": "gat1.attention_target",
                       "attention_source": "gat1.attention_source"}},
          {"kind": "graph_attention", "name": "gat2", "score": "gatv2", "heads": 2,
           "head_width": 3, "combine_heads": "concat", "activation": "elu",
           "tensors": {"target_weight": "gat2.target_weight",
                       "source_weight": "gat2.source_weight", "attention": "gat2.attention"}},
          {"kind": "graph_attention", "name": "gat3", "score": "gat", "heads": 2,
           "head_width": %d, "combine_heads": "mean",
           "tensors": {"weight": "gat3.weight", "attention_target": "gat3.attention_target",
                       "attention_source": "gat3.attention_source"}},
          {"kind": "softmax", "name": "probabilities"}]}
        """
            .formatted(features.size(), quoted(features), quoted(labels), labels.size());
    SplittableRandom random = new SplittableRandom(seed);
    int c = labels.size();
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    tensors.put("gat1.weight", gaussian(random, 0.7, features.size(), 8));
    tensors.put("gat1.attention_target", gaussian(random, 1.0, 2, 4));
    tensors.put("gat1.attention_source", gaussian(random, 1.0, 2, 4));
    tensors.put("gat2.target_weight", gaussian(random, 0.6, 8, 6));
    tensors.put("gat2.source_weight", gaussian(random, 0.6, 8, 6));
    tensors.put("gat2.attention", gaussian(random, 1.0, 2, 3));
    tensors.put("gat3.weight", gaussian(random, 0.8, 6, 2 * c));
    tensors.put("gat3.attention_target", gaussian(random, 1.0, 2, c));
    tensors.put("gat3.attention_source", gaussian(random, 1.0, 2, c));
    try {
      return ModelFile.fromParts(description, tensors);
    } catch (ModelFormatException e) {
      throw new IllegalStateException("the test model's description is wrong", e);
    }
  }

  private static String quoted(List<String> names) {
    return names.stream().map(n -> "\"" + n + "\"").collect(Collectors.joining(", "));
  }

  private static NpyArray gaussian(SplittableRandom random, double scale, int rows, int columns) {
    float[] values = new float[rows * columns];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) (scale * random.nextGaussian());
    }
    return NpyArray.ofFloats(values, rows, columns);
  }
}
