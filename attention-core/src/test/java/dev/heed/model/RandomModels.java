package dev.heed.model;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.npy.NpyArray;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Random;

/**
 * Builds small models with fresh seeded Gaussian weights through {@link ModelFile#fromParts}, for
 * tests that compare two ways of running the same model. Weights are scaled by 1/√(fan-in) so that
 * activations stay of order one through the stack.
 */
public final class RandomModels {

  private static final ObjectMapper JSON = new ObjectMapper();

  private final Random random;
  private final int inputs;
  private final ObjectNode description = JSON.createObjectNode();
  private final ArrayNode layers;
  private final Map<String, NpyArray> tensors = new LinkedHashMap<>();
  private int width;

  private RandomModels(long seed, int inputs) {
    this.random = new Random(seed);
    this.inputs = inputs;
    this.width = inputs;
    description.put("format", "heed-model").put("format_version", 1).put("input_features", inputs);
    layers = description.putArray("layers");
  }

  /**
   * Starts a model reading {@code inputs} features per node.
   *
   * @param seed the weights' seed
   * @param inputs input features per node
   * @return the builder
   */
  public static RandomModels start(long seed, int inputs) {
    return new RandomModels(seed, inputs);
  }

  /**
   * GAT (3 heads × 4, concatenated, ELU, bias, linear residual), then GATv2 (2 heads × 5, averaged,
   * bias, identity-free), then a dense layer to {@code classes} and the softmax head: the stack the
   * receptive-field tests run.
   *
   * @param seed weights' seed
   * @param inputs input features
   * @param classes class count
   * @return the model (kernels from the class path; tests inject their own)
   */
  public static AttentionModel gatGatv2Dense(long seed, int inputs, int classes) {
    return start(seed, inputs)
        .graphAttention("gat", "gat", 3, 4, true, "elu", true, "linear")
        .graphAttention("gatv2", "gatv2", 2, 5, false, "relu", true, "none")
        .dense("dense", classes, "identity")
        .softmax(classes);
  }

  /**
   * Adds a graph-attention layer.
   *
   * @param name layer name
   * @param score "gat" or "gatv2"
   * @param heads heads
   * @param headWidth width per head
   * @param concat concatenate (true) or average heads
   * @param activation activation file name
   * @param bias whether to add a bias
   * @param residual "none", "identity" or "linear"
   * @return this builder
   */
  public RandomModels graphAttention(
      String name,
      String score,
      int heads,
      int headWidth,
      boolean concat,
      String activation,
      boolean bias,
      String residual) {
    ObjectNode layer = layers.addObject();
    layer.put("kind", "graph_attention").put("name", name).put("score", score);
    layer.put("heads", heads).put("head_width", headWidth);
    layer.put("combine_heads", concat ? "concat" : "mean");
    layer.put("activation", activation).put("bias", bias).put("residual", residual);
    int hd = heads * headWidth;
    int out = concat ? hd : headWidth;
    if (score.equals("gatv2")) {
      tensor(layer, "target_weight", width, width, hd);
      tensor(layer, "source_weight", width, width, hd);
      tensor(layer, "attention", headWidth, heads, headWidth);
    } else {
      tensor(layer, "weight", width, width, hd);
      tensor(layer, "attention_target", headWidth, heads, headWidth);
      tensor(layer, "attention_source", headWidth, heads, headWidth);
    }
    if (bias) {
      tensor(layer, "bias", 1, out);
    }
    if (residual.equals("linear")) {
      tensor(layer, "residual_weight", width, width, out);
    }
    width = out;
    return this;
  }

  /**
   * Adds a self-attention block (2 heads, key and value width 3, bias, residual, pre-norm, a
   * feed-forward of width 6).
   *
   * @param name layer name
   * @param complete over every pair (true) or along the graph
   * @return this builder
   */
  public RandomModels selfAttention(String name, boolean complete) {
    ObjectNode layer = layers.addObject();
    layer.put("kind", "self_attention").put("name", name);
    layer.put("pattern", complete ? "complete" : "graph");
    int heads = 2;
    int dk = 3;
    layer.put("heads", heads).put("key_width", dk).put("value_width", dk);
    layer.put("bias", true).put("residual", true).put("normalization", "pre");
    layer.put("feed_forward_width", 6).put("feed_forward_activation", "relu");
    int m = width;
    int hk = heads * dk;
    tensor(layer, "query_weight", m, m, hk);
    tensor(layer, "key_weight", m, m, hk);
    tensor(layer, "value_weight", m, m, hk);
    tensor(layer, "output_weight", hk, hk, m);
    tensor(layer, "query_bias", 1, hk);
    tensor(layer, "key_bias", 1, hk);
    tensor(layer, "value_bias", 1, hk);
    tensor(layer, "output_bias", 1, m);
    tensor(layer, "attention_norm_scale", 1, m);
    tensor(layer, "attention_norm_shift", 1, m);
    tensor(layer, "feed_forward_weight1", m, m, 6);
    tensor(layer, "feed_forward_bias1", 1, 6);
    tensor(layer, "feed_forward_weight2", 6, 6, m);
    tensor(layer, "feed_forward_bias2", 1, m);
    tensor(layer, "feed_forward_norm_scale", 1, m);
    tensor(layer, "feed_forward_norm_shift", 1, m);
    return this;
  }

  /**
   * Adds a dense layer with bias.
   *
   * @param name layer name
   * @param units output width
   * @param activation activation file name
   * @return this builder
   */
  public RandomModels dense(String name, int units, String activation) {
    ObjectNode layer = layers.addObject();
    layer.put("kind", "dense").put("name", name).put("units", units);
    layer.put("bias", true).put("activation", activation);
    tensor(layer, "weight", width, width, units);
    tensor(layer, "bias", 1, units);
    width = units;
    return this;
  }

  /**
   * Ends with the softmax head over {@code classes} labels (the last width must equal it).
   *
   * @param classes class count
   * @return the model
   */
  public AttentionModel softmax(int classes) {
    if (width != classes) {
      throw new IllegalStateException("last width " + width + " != classes " + classes);
    }
    layers.addObject().put("kind", "softmax").put("name", "probabilities");
    ArrayNode labels = description.putArray("class_labels");
    for (int c = 0; c < classes; c++) {
      labels.add("class" + c);
    }
    try {
      return ModelFile.fromParts(JSON.writeValueAsString(description), tensors);
    } catch (Exception e) {
      throw new IllegalStateException("random model of " + inputs + " inputs is invalid", e);
    }
  }

  /** A tensor of Gaussian values scaled by 1/√fanIn, registered under the layer's role. */
  private void tensor(ObjectNode layer, String role, int fanIn, int... shape) {
    int size = 1;
    for (int d : shape) {
      size *= d;
    }
    float[] v = new float[size];
    double scale = 1.0 / Math.sqrt(fanIn);
    for (int i = 0; i < size; i++) {
      v[i] = (float) (scale * random.nextGaussian());
    }
    String name = layer.get("name").asText() + "." + role;
    tensors.put(name, NpyArray.ofFloats(v, shape));
    (layer.has("tensors") ? (ObjectNode) layer.get("tensors") : layer.putObject("tensors"))
        .put(role, name);
  }
}
