package dev.heed.model;

import com.fasterxml.jackson.core.JsonProcessingException;
import com.fasterxml.jackson.core.StreamReadConstraints;
import com.fasterxml.jackson.core.json.JsonReadFeature;
import com.fasterxml.jackson.databind.DeserializationFeature;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.SerializationFeature;
import com.fasterxml.jackson.databind.json.JsonMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.KernelOptions;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyFormatException;
import dev.heed.npy.NpyLimits;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.io.BufferedInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.Iterator;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;

/**
 * Reads and writes Heed model files. A model file is a zip archive laid out like NumPy's {@code
 * .npz}: one JSON entry {@value #DESCRIPTION_ENTRY} describing the model (format name and version,
 * input features, class labels, layers in order with their kind, hyper-parameters and tensor
 * names), plus one {@code <tensor name>.npy} entry per weight tensor. Any training stack can write
 * one with only {@code numpy}, {@code json} and {@code zipfile}; see {@code docs/model-format.md}
 * for the full specification and {@code docs/export_model.py} for a writer.
 *
 * <p>Reading validates everything before a model is returned: the archive (through the safe {@link
 * Npz} reader and its {@link NpyLimits}), the format name and version (files from a newer format
 * version are rejected with a message saying so), every key (unknown keys are errors, catching
 * typos), each layer kind, the width chain from the input features to the class count, and every
 * tensor's type, shape (against the hyper-parameters) and values (finite after rounding to
 * float32). Tensors not used by any layer (or by the check vectors) are errors too. Weights are
 * held as float32. A file with {@link CheckVectors} (optional) is then run over them, and a
 * probability that deviates from the expected one by more than their tolerance is an error naming
 * the deviation, the row and the class: this catches weights in the wrong layout, such as a square
 * weight stored transposed, which pass every shape check.
 *
 * <p>Writing is deterministic (see {@link Npz}): the description with every hyper-parameter spelled
 * out, then the tensors as float32 in layer order, then the check vectors' tensors if the model has
 * them. This class is the only writer of the format in Heed: a model built in Java ({@link
 * AttentionModel#of}) or trained by {@code attention-train} is saved through {@link #write} too.
 * Read → write → read gives a model with identical weights, and writing it again gives identical
 * bytes.
 *
 * <p>Cost: O(file size). Thread safety: stateless; safe from any thread.
 */
public final class ModelFile {

  /** Name of the JSON description entry inside the archive. */
  public static final String DESCRIPTION_ENTRY = "model.json";

  /** The value of the description's {@code "format"} key. */
  public static final String FORMAT_NAME = "heed-model";

  /** The format version this reader and writer implement. */
  public static final int FORMAT_VERSION = 1;

  private static final int MAX_DESCRIPTION_BYTES = 16 << 20;

  private static final Set<String> TOP_LEVEL_KEYS =
      Set.of(
          "format",
          "format_version",
          "input_features",
          "feature_names",
          "class_labels",
          "graph",
          "layers",
          CheckEntries.KEY);

  private static final ObjectMapper JSON =
      JsonMapper.builder(
              com.fasterxml.jackson.core.JsonFactory.builder()
                  .streamReadConstraints(
                      StreamReadConstraints.builder()
                          .maxNestingDepth(32)
                          .maxStringLength(1 << 20)
                          .maxNumberLength(64)
                          .build())
                  .build())
          .enable(DeserializationFeature.FAIL_ON_READING_DUP_TREE_KEY)
          .enable(DeserializationFeature.FAIL_ON_TRAILING_TOKENS)
          .disable(JsonReadFeature.ALLOW_NON_NUMERIC_NUMBERS)
          .enable(SerializationFeature.INDENT_OUTPUT)
          .build();

  private ModelFile() {}

  /**
   * Reads a model file with the default limits.
   *
   * @param file the model file
   * @return the validated model, using kernels with {@link KernelOptions#defaults()}
   * @throws ModelFormatException if the file is malformed or inconsistent (the message names the
   *     layer and tensor at fault), or the model does not reproduce its check vectors
   * @throws IOException if the file cannot be read
   */
  public static AttentionModel read(Path file) throws IOException {
    return read(file, NpyLimits.defaults());
  }

  /**
   * Reads a model file.
   *
   * @param file the model file
   * @param limits size limits for the archive
   * @return the validated model
   * @throws ModelFormatException if the file is malformed, inconsistent or over a limit, or the
   *     model does not reproduce its check vectors
   * @throws IOException if the file cannot be read
   */
  public static AttentionModel read(Path file, NpyLimits limits) throws IOException {
    return read(file, limits, true);
  }

  /**
   * Reads a model file like {@link #read(Path, NpyLimits)} but does not run the model over its
   * check vectors: they are validated and kept ({@link AttentionModel#checks()}), and the caller
   * compares them itself ({@link CheckVectors#compareWithReference}). For tools that report the
   * deviation rather than fail, such as {@code heed check-model}.
   *
   * @param file the model file
   * @param limits size limits for the archive
   * @return the validated model, its check vectors not yet compared
   * @throws ModelFormatException if the file is malformed, inconsistent or over a limit
   * @throws IOException if the file cannot be read
   */
  public static AttentionModel readUnverified(Path file, NpyLimits limits) throws IOException {
    return read(file, limits, false);
  }

  private static AttentionModel read(Path file, NpyLimits limits, boolean verify)
      throws IOException {
    Objects.requireNonNull(file, "file");
    try (InputStream in = new BufferedInputStream(Files.newInputStream(file))) {
      return read(in, file.getFileName().toString(), limits, verify);
    }
  }

  /**
   * Reads a model from a stream holding a model file; the stream is not closed.
   *
   * @param in the stream
   * @param name a name for the input, used in error messages
   * @param limits size limits for the archive
   * @return the validated model
   * @throws ModelFormatException if the input is malformed, inconsistent or over a limit, or the
   *     model does not reproduce its check vectors
   * @throws IOException if the stream fails
   */
  public static AttentionModel read(InputStream in, String name, NpyLimits limits)
      throws IOException {
    return read(in, name, limits, true);
  }

  private static AttentionModel read(InputStream in, String name, NpyLimits limits, boolean verify)
      throws IOException {
    Objects.requireNonNull(in, "in");
    Objects.requireNonNull(name, "name");
    Objects.requireNonNull(limits, "limits");
    NpzContents contents;
    try {
      contents = Npz.read(in, name, limits);
    } catch (NpyFormatException e) {
      throw new ModelFormatException(e.getMessage(), null, tensorOf(e.entry()), e);
    }
    byte[] description =
        contents
            .otherEntry(DESCRIPTION_ENTRY)
            .orElseThrow(
                () ->
                    new ModelFormatException(
                        name
                            + ": no '"
                            + DESCRIPTION_ENTRY
                            + "' entry; a model file holds the JSON description and .npy tensors"
                            + " (entries found: "
                            + contents.otherEntryNames()
                            + contents.arrays().keySet()
                            + ")",
                        null,
                        null,
                        null));
    for (String other : contents.otherEntryNames()) {
      if (!other.equals(DESCRIPTION_ENTRY)) {
        throw new ModelFormatException(
            name
                + ": unexpected entry '"
                + other
                + "'; only "
                + DESCRIPTION_ENTRY
                + " and .npy tensors belong",
            null,
            null,
            null);
      }
    }
    if (description.length > MAX_DESCRIPTION_BYTES) {
      throw new ModelFormatException(
          name + ": " + DESCRIPTION_ENTRY + " is larger than " + MAX_DESCRIPTION_BYTES + " bytes",
          null,
          null,
          null);
    }
    JsonNode root;
    try {
      root = JSON.readTree(new String(description, StandardCharsets.UTF_8));
    } catch (JsonProcessingException e) {
      throw new ModelFormatException(
          name + ": " + DESCRIPTION_ENTRY + " is not valid JSON: " + e.getOriginalMessage(),
          null,
          null,
          e);
    }
    return parse(name, root, contents.arrays(), verify);
  }

  /**
   * Builds a model from a description and tensors held in memory, with the same validation as
   * reading a file. Java code that produces weights itself can instead build the layers with each
   * kind's builder and stack them with {@link AttentionModel#of}; {@link #write} saves either.
   *
   * @param description the {@value #DESCRIPTION_ENTRY} JSON text (see {@code docs/model-format.md})
   * @param tensors input, not modified: the tensors by name
   * @return the validated model
   * @throws ModelFormatException if the description or a tensor is invalid (the message names the
   *     layer and tensor), or the model does not reproduce its check vectors
   */
  public static AttentionModel fromParts(String description, Map<String, NpyArray> tensors)
      throws ModelFormatException {
    Objects.requireNonNull(description, "description");
    Objects.requireNonNull(tensors, "tensors");
    JsonNode root;
    try {
      root = JSON.readTree(description);
    } catch (JsonProcessingException e) {
      throw new ModelFormatException(
          "description: not valid JSON: " + e.getOriginalMessage(), null, null, e);
    }
    return parse("description", root, Map.copyOf(tensors), true);
  }

  private static String tensorOf(String entry) {
    int colon = entry.lastIndexOf(':');
    String e = colon >= 0 ? entry.substring(colon + 1) : entry;
    return e.endsWith(".npy") ? e.substring(0, e.length() - 4) : null;
  }

  private static ModelFormatException top(String name, String problem) {
    return new ModelFormatException(name + ": " + problem, null, null, null);
  }

  private static AttentionModel parse(
      String name, JsonNode root, Map<String, NpyArray> arrays, boolean verifyChecks)
      throws ModelFormatException {
    if (root == null || !root.isObject()) {
      throw top(name, DESCRIPTION_ENTRY + " must hold a JSON object");
    }
    JsonNode format = root.get("format");
    if (format == null || !format.isTextual() || !format.asText().equals(FORMAT_NAME)) {
      throw top(
          name, "\"format\" must be \"" + FORMAT_NAME + "\", got " + format + "; not a Heed model");
    }
    JsonNode version = root.get("format_version");
    if (version == null || !version.isIntegralNumber()) {
      throw top(name, "\"format_version\" must be an integer, got " + version);
    }
    if (!version.canConvertToInt() || version.asInt() > FORMAT_VERSION) {
      throw top(
          name,
          "format version "
              + version
              + " is newer than this version of Heed reads (up to "
              + FORMAT_VERSION
              + "); upgrade Heed to load this model");
    }
    if (version.asInt() < 1) {
      throw top(name, "format version " + version + " does not exist; versions start at 1");
    }
    for (Iterator<String> it = root.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      if (!TOP_LEVEL_KEYS.contains(key)) {
        throw top(name, "unknown top-level key '" + key + "'; expected " + TOP_LEVEL_KEYS);
      }
    }
    JsonNode inputs = root.get("input_features");
    if (inputs == null
        || !inputs.isIntegralNumber()
        || !inputs.canConvertToInt()
        || inputs.asInt() < 1
        || inputs.asInt() > 1 << 24) {
      throw top(
          name, "\"input_features\" must be an integer in 1.." + (1 << 24) + ", got " + inputs);
    }
    int inputCount = inputs.asInt();
    List<String> featureNames = List.of();
    if (root.has("feature_names")) {
      featureNames = strings(name, root.get("feature_names"), "feature_names", false);
      if (featureNames.size() != inputCount) {
        throw top(
            name,
            "\"feature_names\" has "
                + featureNames.size()
                + " names but \"input_features\" is "
                + inputCount);
      }
    }
    List<String> labels = strings(name, root.get("class_labels"), "class_labels", true);
    JsonNode layersJson = root.get("layers");
    if (layersJson == null || !layersJson.isArray() || layersJson.isEmpty()) {
      throw top(name, "\"layers\" must be a non-empty array");
    }
    List<Layer> layers = new ArrayList<>();
    Set<String> used = new HashSet<>();
    int width = inputCount;
    for (int index = 0; index < layersJson.size(); index++) {
      JsonNode lj = layersJson.get(index);
      if (!lj.isObject()) {
        throw top(name, "layer " + index + " must be a JSON object");
      }
      JsonNode nameNode = lj.get("name");
      if (nameNode == null || !nameNode.isTextual() || nameNode.asText().isEmpty()) {
        throw top(name, "layer " + index + " needs a non-empty string \"name\"");
      }
      String layerName = nameNode.asText();
      JsonNode kindNode = lj.get("kind");
      String kind = kindNode == null ? "null" : kindNode.asText();
      LayerReader r = new LayerReader(name, index, layerName, kind, width, lj, arrays, used);
      Layer layer =
          switch (kind) {
            case GraphAttentionLayer.KIND -> GraphAttentionLayer.read(r);
            case SelfAttentionLayer.KIND -> SelfAttentionLayer.read(r);
            case DenseLayer.KIND -> DenseLayer.read(r);
            case SoftmaxLayer.KIND -> SoftmaxLayer.read(r);
            default ->
                throw r.error(
                    "unknown layer kind "
                        + kindNode
                        + "; known kinds are "
                        + List.of(
                            GraphAttentionLayer.KIND,
                            SelfAttentionLayer.KIND,
                            DenseLayer.KIND,
                            SoftmaxLayer.KIND));
          };
      layers.add(layer);
      width = layer.outputWidth();
    }
    AttentionModel model;
    try {
      model = AttentionModel.of(layers, labels, featureNames);
    } catch (IllegalArgumentException e) {
      throw new ModelFormatException(name + ": " + e.getMessage(), null, null, e);
    }
    if (root.has(CheckEntries.KEY)) {
      model =
          model.withChecks(
              CheckEntries.read(name, root.get(CheckEntries.KEY), arrays, used, model));
    }
    for (String tensor : arrays.keySet()) {
      if (!used.contains(tensor)) {
        throw new ModelFormatException(
            name + ": tensor '" + tensor + "' is not used by any layer", null, tensor, null);
      }
    }
    if (root.has("graph")) {
      model = model.withGraphPolicies(graphPolicies(name, root.get("graph")));
    }
    if (verifyChecks && model.checks().isPresent()) {
      CheckEntries.verify(name, model);
    }
    return model;
  }

  private static final Set<String> GRAPH_KEYS = Set.of("direction", "self_loops", "duplicates");

  private static GraphPolicies graphPolicies(String name, JsonNode graph)
      throws ModelFormatException {
    if (!graph.isObject()) {
      throw top(name, "\"graph\" must be an object with keys " + GRAPH_KEYS);
    }
    for (Iterator<String> it = graph.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      if (!GRAPH_KEYS.contains(key)) {
        throw top(name, "unknown key '" + key + "' in \"graph\"; expected " + GRAPH_KEYS);
      }
    }
    return new GraphPolicies(
        graphPolicy(name, graph, "direction", DirectionPolicy.class),
        graphPolicy(name, graph, "self_loops", SelfLoopPolicy.class),
        graphPolicy(name, graph, "duplicates", DuplicatePolicy.class));
  }

  private static <E extends Enum<E>> E graphPolicy(
      String name, JsonNode graph, String key, Class<E> type) throws ModelFormatException {
    JsonNode value = graph.get(key);
    if (value == null || !value.isTextual()) {
      throw top(name, "\"graph\" needs a string \"" + key + "\", got " + value);
    }
    try {
      return GraphPolicies.policy(type, value.asText());
    } catch (IllegalArgumentException e) {
      throw top(name, "\"graph\".\"" + key + "\": " + e.getMessage());
    }
  }

  private static List<String> strings(String name, JsonNode node, String key, boolean unique)
      throws ModelFormatException {
    if (node == null || !node.isArray() || node.isEmpty()) {
      throw top(name, "\"" + key + "\" must be a non-empty array of strings");
    }
    List<String> out = new ArrayList<>();
    Set<String> seen = new HashSet<>();
    for (int i = 0; i < node.size(); i++) {
      JsonNode s = node.get(i);
      if (!s.isTextual()) {
        throw top(name, "\"" + key + "\"[" + i + "] must be a string, got " + s);
      }
      if (unique && !seen.add(s.asText())) {
        throw top(name, "\"" + key + "\"[" + i + "] repeats '" + s.asText() + "'");
      }
      out.add(s.asText());
    }
    return out;
  }

  /**
   * Returns the model-file bytes for a model (deterministic; see the class comment).
   *
   * @param model the model
   * @return the file's bytes
   */
  public static byte[] toBytes(AttentionModel model) {
    Objects.requireNonNull(model, "model");
    ObjectNode root = JSON.createObjectNode();
    root.put("format", FORMAT_NAME);
    root.put("format_version", FORMAT_VERSION);
    root.put("input_features", model.inputFeatureCount());
    if (!model.featureNames().isEmpty()) {
      ArrayNode names = root.putArray("feature_names");
      model.featureNames().forEach(names::add);
    }
    ArrayNode labels = root.putArray("class_labels");
    model.classLabels().forEach(labels::add);
    model
        .graphPolicies()
        .ifPresent(
            c -> {
              ObjectNode graph = root.putObject("graph");
              graph.put("direction", GraphPolicies.word(c.direction()));
              graph.put("self_loops", GraphPolicies.word(c.selfLoops()));
              graph.put("duplicates", GraphPolicies.word(c.duplicates()));
            });
    ArrayNode layers = root.putArray("layers");
    Map<String, NpyArray> arrays = new LinkedHashMap<>();
    for (Layer layer : model.layers()) {
      ObjectNode lj = layers.addObject();
      lj.put("kind", layer.kind());
      lj.put("name", layer.name());
      layer.writeHyperParameters(lj);
      ObjectNode tj = lj.putObject("tensors");
      for (Map.Entry<String, Tensor> e : layer.tensors().entrySet()) {
        Tensor t = e.getValue();
        tj.put(e.getKey(), t.name());
        arrays.putIfAbsent(t.name(), NpyArray.ofFloats(t.values(), t.shape()));
      }
    }
    model.checks().ifPresent(checks -> CheckEntries.write(root, arrays, checks));
    byte[] description;
    try {
      description = (JSON.writeValueAsString(root) + "\n").getBytes(StandardCharsets.UTF_8);
    } catch (JsonProcessingException e) {
      throw new IllegalStateException("cannot write the model description", e);
    }
    return Npz.toBytes(Map.of(DESCRIPTION_ENTRY, description), arrays);
  }

  /**
   * Writes a model file, replacing any existing file.
   *
   * @param model the model
   * @param file the destination
   * @throws IOException if writing fails
   */
  public static void write(AttentionModel model, Path file) throws IOException {
    Objects.requireNonNull(file, "file");
    Files.write(file, toBytes(model));
  }
}
