package dev.heed.model;

import com.fasterxml.jackson.databind.JsonNode;
import dev.heed.npy.NpyArray;
import java.util.Arrays;
import java.util.HashSet;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.Set;

/**
 * Reads and validates one layer's description and tensors from a model file. Every error names the
 * file, the layer and, where it applies, the tensor. Internal.
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
  private final Set<String> readRoles = new HashSet<>();

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
    return new ModelFormatException(where() + ": " + problem, name, null, null);
  }

  ModelFormatException tensorError(String role, String tensorName, String problem) {
    return new ModelFormatException(
        where() + ", tensor '" + tensorName + "' (role " + role + "): " + problem,
        name,
        tensorName,
        null);
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

  /** A required integer of at least {@code min} (and at most 2^20, far beyond any real width). */
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
    if (!v.isIntegralNumber() || !v.canConvertToInt() || v.asInt() < min || v.asInt() > 1 << 20) {
      throw error("'" + key + "' must be an integer in " + min + ".." + (1 << 20) + ", got " + v);
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
   * A required tensor of the given shape: float32 or float64 (rounded to float32), every value
   * finite after rounding.
   *
   * @param role the role within the layer, the key under "tensors"
   * @param why how the expected shape follows from the hyper-parameters, for the message
   */
  Tensor tensor(String role, String why, int... shape) throws ModelFormatException {
    readRoles.add(role);
    JsonNode ref = tensorsJson == null ? null : tensorsJson.get(role);
    if (ref == null || ref.isNull()) {
      throw error(
          "missing tensor role '"
              + role
              + "' under \"tensors\" (shape "
              + Arrays.toString(shape)
              + ": "
              + why
              + ")");
    }
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
    if (!Arrays.equals(array.shape(), shape)) {
      throw tensorError(
          role,
          tensorName,
          "shape "
              + Arrays.toString(array.shape())
              + ", expected "
              + Arrays.toString(shape)
              + " ("
              + why
              + ")");
    }
    float[] values = array.toFloats();
    for (int i = 0; i < values.length; i++) {
      if (!Float.isFinite(values[i])) {
        throw tensorError(
            role,
            tensorName,
            "holds "
                + values[i]
                + (Float.isInfinite(values[i]) && array.dataType().byteWidth() == 8
                    ? " (a float64 value beyond the float32 range)"
                    : "")
                + " at flat index "
                + i
                + "; every weight must be finite");
      }
    }
    return new Tensor(tensorName, shape.clone(), values);
  }

  /** Checks that the layer holds no keys or tensor roles that were not read. */
  void finish() throws ModelFormatException {
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
    if (tensorsJson != null) {
      for (Iterator<String> it = tensorsJson.fieldNames(); it.hasNext(); ) {
        String role = it.next();
        if (!readRoles.contains(role)) {
          throw error(
              "tensor role '"
                  + role
                  + "' is not used with these hyper-parameters; expected roles "
                  + new java.util.TreeSet<>(readRoles));
        }
      }
    }
  }
}
