package dev.heed.model;

import com.fasterxml.jackson.databind.JsonNode;
import dev.heed.npy.NpyArray;
import java.util.HashSet;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.function.Supplier;

/**
 * Reads one layer's description and tensors from a model file: the keys with their types and
 * ranges, and the tensors with their types; the layer's builder then checks the tensors against the
 * settings ({@link LayerParts}), as it does for layers built in Java. Every error names the file,
 * the layer and, where it applies, the tensor. Internal.
 */
final class LayerReader {

  private static final Set<String> COMMON_KEYS = Set.of("kind", "name", "tensors");

  final String file;
  final int index;
  final String name;
  final String kind;
  final int inputWidth;
  private final JsonNode json;
  private final JsonNode tensorsJson;
  private final Map<String, NpyArray> arrays;
  private final Set<String> usedArrays;
  private final Set<String> readKeys = new HashSet<>();

  LayerReader(
      String file,
      int index,
      String name,
      String kind,
      int inputWidth,
      JsonNode json,
      Map<String, NpyArray> arrays,
      Set<String> usedArrays)
      throws ModelFormatException {
    this.file = file;
    this.index = index;
    this.name = name;
    this.kind = kind;
    this.inputWidth = inputWidth;
    this.json = json;
    this.arrays = arrays;
    this.usedArrays = usedArrays;
    JsonNode t = json.get("tensors");
    if (t != null && !t.isObject()) {
      throw error("'tensors' must be an object mapping roles to tensor names");
    }
    this.tensorsJson = t;
  }

  String where() {
    return file + ": layer " + index + " '" + name + "' (" + kind + ")";
  }

  ModelFormatException error(String problem) {
    return fileError(null, null, problem, null);
  }

  ModelFormatException tensorError(String role, String tensorName, String problem) {
    return fileError(role, tensorName, problem, null);
  }

  private ModelFormatException fileError(
      String role, String tensorName, String problem, Throwable cause) {
    return new ModelFormatException(
        where() + InvalidLayerException.tensorPart(role, tensorName) + ": " + problem,
        name,
        tensorName,
        cause);
  }

  /** A required string, one of {@code allowed}. */
  String string(String key, List<String> allowed) throws ModelFormatException {
    return string(key, null, allowed);
  }

  /** A string one of {@code allowed}, or {@code defaultValue} when absent (null: required). */
  String string(String key, String defaultValue, List<String> allowed) throws ModelFormatException {
    readKeys.add(key);
    JsonNode v = json.get(key);
    if (v == null || v.isNull()) {
      if (defaultValue == null) {
        throw error("missing '" + key + "'; expected one of " + allowed);
      }
      return defaultValue;
    }
    if (!v.isTextual() || !allowed.contains(v.asText())) {
      throw error("'" + key + "' is " + v + "; expected one of " + allowed);
    }
    return v.asText();
  }

  /** A required integer of at least {@code min} (and at most {@link LayerParts#MAX_WIDTH}). */
  int integer(String key, int min) throws ModelFormatException {
    readKeys.add(key);
    JsonNode v = json.get(key);
    if (v == null || v.isNull()) {
      throw error("missing '" + key + "' (an integer of at least " + min + ")");
    }
    return checkInteger(key, v, min);
  }

  /** An integer of at least {@code min}, or {@code defaultValue} when absent. */
  int integer(String key, int defaultValue, int min) throws ModelFormatException {
    readKeys.add(key);
    JsonNode v = json.get(key);
    return v == null || v.isNull() ? defaultValue : checkInteger(key, v, min);
  }

  private int checkInteger(String key, JsonNode v, int min) throws ModelFormatException {
    int max = LayerParts.MAX_WIDTH;
    if (!v.isIntegralNumber() || !v.canConvertToInt() || v.asInt() < min || v.asInt() > max) {
      throw error("'" + key + "' must be an integer in " + min + ".." + max + ", got " + v);
    }
    return v.asInt();
  }

  /** A boolean, or {@code defaultValue} when absent. */
  boolean bool(String key, boolean defaultValue) throws ModelFormatException {
    readKeys.add(key);
    JsonNode v = json.get(key);
    if (v == null || v.isNull()) {
      return defaultValue;
    }
    if (!v.isBoolean()) {
      throw error("'" + key + "' must be true or false, got " + v);
    }
    return v.asBoolean();
  }

  /** A number in {@code [min, maxExclusive)}, or {@code defaultValue} when absent. */
  double number(String key, double defaultValue, double min, double maxExclusive)
      throws ModelFormatException {
    readKeys.add(key);
    JsonNode v = json.get(key);
    if (v == null || v.isNull()) {
      return defaultValue;
    }
    if (!v.isNumber() || !(v.asDouble() >= min && v.asDouble() < maxExclusive)) {
      throw error(
          "'" + key + "' must be a number in [" + min + ", " + maxExclusive + "), got " + v);
    }
    return v.asDouble();
  }

  /** An activation name, or {@code defaultValue} when absent. */
  Activation activation(String key, Activation defaultValue) throws ModelFormatException {
    String s = string(key, defaultValue.fileName(), List.of("identity", "relu", "elu"));
    return Activation.forFileName(s);
  }

  /**
   * Finishes reading the layer: checks that the description holds no keys that were not read, hands
   * every tensor listed under "tensors" to {@code parts} (float32 or float64, the latter rounded to
   * float32), and builds the layer, which checks the tensors against the settings.
   *
   * @param parts the builder's parts, to receive the tensors
   * @param build the builder's build step
   * @return the layer
   * @throws ModelFormatException if a key is unknown, a tensor is absent or not floating point, or
   *     the build step rejects the settings or a tensor (the message names the layer and tensor)
   */
  <L extends Layer> L build(LayerParts parts, Supplier<L> build) throws ModelFormatException {
    checkKeys();
    if (tensorsJson != null) {
      for (Iterator<String> it = tensorsJson.fieldNames(); it.hasNext(); ) {
        supply(parts, it.next());
      }
    }
    try {
      return build.get();
    } catch (InvalidLayerException e) {
      throw fileError(e.role, e.tensorName, e.problem, e);
    }
  }

  private void supply(LayerParts parts, String role) throws ModelFormatException {
    JsonNode ref = tensorsJson.get(role);
    if (!ref.isTextual()) {
      throw error("tensor role '" + role + "' must name a tensor (a string), got " + ref);
    }
    String tensorName = ref.asText();
    NpyArray array = arrays.get(tensorName);
    if (array == null) {
      throw tensorError(role, tensorName, "no entry '" + tensorName + ".npy' in the file");
    }
    usedArrays.add(tensorName);
    if (!array.dataType().isFloatingPoint()) {
      throw tensorError(
          role,
          tensorName,
          "type "
              + array.dataType().descriptor()
              + "; weights must be '<f4' or '<f8' (float32 or float64)");
    }
    parts.putRead(
        role, tensorName, array.shape(), array.toFloats(), array.dataType().byteWidth() == 8);
  }

  /** Checks that the layer holds no keys that were not read. */
  private void checkKeys() throws ModelFormatException {
    for (Iterator<String> it = json.fieldNames(); it.hasNext(); ) {
      String key = it.next();
      if (!COMMON_KEYS.contains(key) && !readKeys.contains(key)) {
        throw error(
            "unknown key '"
                + key
                + "'; the "
                + kind
                + " layer reads "
                + new java.util.TreeSet<>(readKeys));
      }
    }
  }
}
