package dev.heed.train.model;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import dev.heed.npy.NpyArray;
import java.io.IOException;
import java.nio.file.Path;
import java.util.HashSet;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;
import java.util.Set;

/**
 * Writes trained parameters as a Heed model file ({@code docs/model-format.md}, version 1), so that
 * {@link ModelFile#read} and the classification API serve the trained network.
 *
 * <p>Mapping, layer by layer (layers are named {@code layer0}, {@code layer1}, … and tensors {@code
 * <layer>.<role>}); a {@code softmax} layer named {@code probabilities} is appended, because the
 * trainer's loss is softmax cross-entropy over the last layer's outputs:
 *
 * <ul>
 *   <li>{@code graph-attention} → {@code graph_attention}: {@code score} ADDITIVE → {@code "gat"}
 *       (tensors {@code weight}, {@code attentionTarget} → {@code attention_target}, {@code
 *       attentionSource} → {@code attention_source}), GATV2 → {@code "gatv2"} ({@code weightTarget}
 *       → {@code target_weight}, {@code weightSource} → {@code source_weight}, values are the
 *       source projection in both; {@code attention}); heads, head width, CONCATENATE/MEAN → {@code
 *       concat}/{@code mean}, slope, activation; bias added after the heads are combined; a
 *       residual becomes {@code identity} when input and output widths agree and {@code linear}
 *       ({@code residualWeight} → {@code residual_weight}) otherwise, added before the activation.
 *       These are the same equations in both places (checked by the round-trip test).
 *   <li>{@code dense} → {@code dense}: {@code weight}, {@code bias}, activation.
 *   <li>{@code self-attention} → {@code self_attention} with {@code pattern "graph"} (attention
 *       along the pattern given at inference; pass a complete pattern for full self-attention), no
 *       normalisation and no feed-forward. The file's block has biases on every projection and a
 *       residual that is the identity, and no activation, so only layers with output width = input
 *       width, identity activation, and residual off or identity map exactly; the query, key and
 *       value biases are written as zeros. Other self-attention layers are refused with a message.
 * </ul>
 *
 * <p>Example:
 *
 * <pre>{@code
 * TrainedParameters trained = network.export();
 * ModelFileWriter.to(Path.of("model.heed"), List.of("ordinary", "merchant", "mule-ring"))
 *     .featureNames(featureNames)
 *     .write(trained);
 * }</pre>
 *
 * <p>Cost: O(parameter count). Thread safety: immutable after configuration; {@link #write} may be
 * called from any thread, but concurrent writes to the same file race.
 */
public final class ModelFileWriter implements TrainedParametersWriter {

  /** Name of the softmax layer the writer appends. */
  public static final String SOFTMAX_LAYER_NAME = "probabilities";

  private static final ObjectMapper JSON = new ObjectMapper();

  private final Path file;
  private final List<String> classLabels;
  private final List<String> featureNames;

  private ModelFileWriter(Path file, List<String> classLabels, List<String> featureNames) {
    this.file = file;
    this.classLabels = classLabels;
    this.featureNames = featureNames;
  }

  /**
   * Starts a writer to a file.
   *
   * @param file the destination; replaced if it exists
   * @param classLabels the class labels, in the order of the network's outputs; distinct
   * @return the writer, without feature names
   * @throws IllegalArgumentException if the labels are empty or repeat
   */
  public static ModelFileWriter to(Path file, List<String> classLabels) {
    Objects.requireNonNull(file, "file");
    return new ModelFileWriter(file, checkLabels(classLabels), List.of());
  }

  /**
   * Returns a writer that also records the input feature names.
   *
   * @param names one name per input feature, in column order
   * @return a new writer
   */
  public ModelFileWriter featureNames(List<String> names) {
    return new ModelFileWriter(file, classLabels, List.copyOf(names));
  }

  /**
   * Writes the parameters as a model file, after validating them exactly as {@link ModelFile#read}
   * would.
   *
   * @param parameters input, not modified
   * @throws IllegalArgumentException if the network cannot be expressed in the format (the message
   *     says which layer and why) or the label or feature-name counts disagree with it
   * @throws IOException if writing fails
   */
  @Override
  public void write(TrainedParameters parameters) throws IOException {
    ModelFile.write(toModel(parameters, classLabels, featureNames), file);
  }

  /**
   * Maps trained parameters onto a served model in memory, with the file format's validation.
   *
   * @param parameters input, not modified
   * @param classLabels one label per class output, distinct
   * @param featureNames one name per input feature, or empty for none
   * @return the model, as {@link ModelFile#read} would return it for the written file
   * @throws IllegalArgumentException if the network cannot be expressed in the format, or a count
   *     disagrees
   */
  public static AttentionModel toModel(
      TrainedParameters parameters, List<String> classLabels, List<String> featureNames) {
    Objects.requireNonNull(parameters, "parameters");
    List<String> labels = checkLabels(classLabels);
    List<String> names = List.copyOf(featureNames);
    if (labels.size() != parameters.classCount()) {
      throw new IllegalArgumentException(
          "the network has "
              + parameters.classCount()
              + " class outputs but "
              + labels.size()
              + " class labels were given: "
              + labels);
    }
    if (!names.isEmpty() && names.size() != parameters.inputWidth()) {
      throw new IllegalArgumentException(
          "the network reads "
              + parameters.inputWidth()
              + " features but "
              + names.size()
              + " feature names were given");
    }
    ObjectNode root = JSON.createObjectNode();
    root.put("format", ModelFile.FORMAT_NAME);
    root.put("format_version", ModelFile.FORMAT_VERSION);
    root.put("input_features", parameters.inputWidth());
    if (!names.isEmpty()) {
      ArrayNode fn = root.putArray("feature_names");
      names.forEach(fn::add);
    }
    ArrayNode cl = root.putArray("class_labels");
    labels.forEach(cl::add);
    ArrayNode layers = root.putArray("layers");
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    for (int i = 0; i < parameters.layers().size(); i++) {
      TrainedLayer layer = parameters.layers().get(i);
      String name = "layer" + i;
      ObjectNode lj = layers.addObject();
      switch (layer.kind()) {
        case "graph-attention" -> graphAttention(layer, name, lj, tensors);
        case "dense" -> dense(layer, name, lj, tensors);
        case "self-attention" -> selfAttention(layer, i, name, lj, tensors);
        default ->
            throw new IllegalArgumentException(
                "layer "
                    + i
                    + ": kind '"
                    + layer.kind()
                    + "' has no model-file mapping; known kinds are graph-attention, dense and"
                    + " self-attention");
      }
    }
    ObjectNode softmax = layers.addObject();
    softmax.put("kind", "softmax");
    softmax.put("name", SOFTMAX_LAYER_NAME);
    String description;
    try {
      description = JSON.writeValueAsString(root);
    } catch (JsonProcessingException e) {
      throw new IllegalStateException("cannot write the model description", e);
    }
    try {
      return ModelFile.fromParts(description, tensors);
    } catch (ModelFormatException e) {
      throw new IllegalArgumentException(
          "the trained network does not form a valid model file: " + e.getMessage(), e);
    }
  }

  private static void graphAttention(
      TrainedLayer layer, String name, ObjectNode lj, Map<String, NpyArray> tensors) {
    Map<String, String> hp = layer.hyperParameters();
    boolean v2 = hp.get("score").equals("GATV2");
    int in = Integer.parseInt(hp.get("inputWidth"));
    int out = Integer.parseInt(hp.get("outputWidth"));
    lj.put("kind", "graph_attention");
    lj.put("name", name);
    lj.put("score", v2 ? "gatv2" : "gat");
    lj.put("heads", Integer.parseInt(hp.get("heads")));
    lj.put("head_width", Integer.parseInt(hp.get("headWidth")));
    lj.put("combine_heads", hp.get("headMerge").equals("MEAN") ? "mean" : "concat");
    lj.put("negative_slope", Double.parseDouble(hp.get("negativeSlope")));
    lj.put("activation", activation(hp.get("activation")));
    boolean bias = Boolean.parseBoolean(hp.get("bias"));
    lj.put("bias", bias);
    boolean residual = Boolean.parseBoolean(hp.get("residual"));
    lj.put("residual", !residual ? "none" : in == out ? "identity" : "linear");
    ObjectNode roles = lj.putObject("tensors");
    if (v2) {
      put(roles, tensors, name, "target_weight", layer.tensor("weightTarget"));
      put(roles, tensors, name, "source_weight", layer.tensor("weightSource"));
      put(roles, tensors, name, "attention", layer.tensor("attention"));
    } else {
      put(roles, tensors, name, "weight", layer.tensor("weight"));
      put(roles, tensors, name, "attention_target", layer.tensor("attentionTarget"));
      put(roles, tensors, name, "attention_source", layer.tensor("attentionSource"));
    }
    if (bias) {
      put(roles, tensors, name, "bias", layer.tensor("bias"));
    }
    if (residual && in != out) {
      put(roles, tensors, name, "residual_weight", layer.tensor("residualWeight"));
    }
  }

  private static void dense(
      TrainedLayer layer, String name, ObjectNode lj, Map<String, NpyArray> tensors) {
    Map<String, String> hp = layer.hyperParameters();
    boolean bias = Boolean.parseBoolean(hp.get("bias"));
    lj.put("kind", "dense");
    lj.put("name", name);
    lj.put("units", Integer.parseInt(hp.get("outputWidth")));
    lj.put("bias", bias);
    lj.put("activation", activation(hp.get("activation")));
    ObjectNode roles = lj.putObject("tensors");
    put(roles, tensors, name, "weight", layer.tensor("weight"));
    if (bias) {
      put(roles, tensors, name, "bias", layer.tensor("bias"));
    }
  }

  private static void selfAttention(
      TrainedLayer layer, int index, String name, ObjectNode lj, Map<String, NpyArray> tensors) {
    Map<String, String> hp = layer.hyperParameters();
    int in = Integer.parseInt(hp.get("inputWidth"));
    int out = Integer.parseInt(hp.get("outputWidth"));
    if (in != out || !hp.get("activation").equals("IDENTITY")) {
      throw new IllegalArgumentException(
          "layer "
              + index
              + " (self-attention, "
              + in
              + " -> "
              + out
              + ", "
              + hp.get("activation")
              + "): the model file's self_attention block keeps the width and has no activation;"
              + " train it with output width = input width ("
              + in
              + ") and activation IDENTITY, and add a dense layer for other widths or"
              + " activations");
    }
    int heads = Integer.parseInt(hp.get("heads"));
    int keyDim = Integer.parseInt(hp.get("keyDim"));
    int valueDim = Integer.parseInt(hp.get("valueDim"));
    boolean bias = Boolean.parseBoolean(hp.get("bias"));
    lj.put("kind", "self_attention");
    lj.put("name", name);
    lj.put("pattern", "graph");
    lj.put("heads", heads);
    lj.put("key_width", keyDim);
    lj.put("value_width", valueDim);
    lj.put("bias", bias);
    lj.put("residual", Boolean.parseBoolean(hp.get("residual")));
    lj.put("normalization", "none");
    lj.put("feed_forward_width", 0);
    ObjectNode roles = lj.putObject("tensors");
    put(roles, tensors, name, "query_weight", layer.tensor("queryWeight"));
    put(roles, tensors, name, "key_weight", layer.tensor("keyWeight"));
    put(roles, tensors, name, "value_weight", layer.tensor("valueWeight"));
    put(roles, tensors, name, "output_weight", layer.tensor("outputWeight"));
    if (bias) {
      // the training block biases only its output; the file's block biases every projection
      put(roles, tensors, name, "query_bias", zeros("queryBias", heads * keyDim));
      put(roles, tensors, name, "key_bias", zeros("keyBias", heads * keyDim));
      put(roles, tensors, name, "value_bias", zeros("valueBias", heads * valueDim));
      put(roles, tensors, name, "output_bias", layer.tensor("bias"));
    }
  }

  private static NamedTensor zeros(String name, int length) {
    return new NamedTensor(name, new int[] {length}, new float[length]);
  }

  private static void put(
      ObjectNode roles,
      Map<String, NpyArray> tensors,
      String layerName,
      String role,
      NamedTensor tensor) {
    String tensorName = layerName + "." + role;
    roles.put(role, tensorName);
    tensors.put(tensorName, NpyArray.ofFloats(tensor.values(), tensor.shape()));
  }

  private static String activation(String trainingName) {
    return switch (trainingName) {
      case "ELU" -> "elu";
      case "RELU" -> "relu";
      case "IDENTITY" -> "identity";
      default ->
          throw new IllegalArgumentException(
              "activation "
                  + trainingName
                  + " has no model-file name; the format knows identity, relu and elu");
    };
  }

  private static List<String> checkLabels(List<String> classLabels) {
    List<String> labels = List.copyOf(classLabels);
    if (labels.isEmpty()) {
      throw new IllegalArgumentException("at least one class label is needed");
    }
    Set<String> seen = new HashSet<>();
    for (int i = 0; i < labels.size(); i++) {
      if (!seen.add(labels.get(i))) {
        throw new IllegalArgumentException(
            "class label " + i + " repeats '" + labels.get(i) + "'; labels must be distinct");
      }
    }
    return labels;
  }

  @Override
  public String toString() {
    return String.format(Locale.ROOT, "ModelFileWriter[%s, %s]", file, classLabels);
  }
}
