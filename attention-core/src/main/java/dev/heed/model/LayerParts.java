package dev.heed.model;

import java.util.Arrays;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Objects;

/**
 * What a layer builder collects: the layer's kind and name, and its tensors by role. Both ways of
 * making a layer fill one: the public builders (flat values from Java) and the model file reader
 * (tensors with their names and shapes from the file). The builder then takes each tensor its
 * settings call for, checked against the shape those settings imply, so a layer from Java and a
 * layer from a file pass the same checks. Internal; not thread-safe.
 */
final class LayerParts {

  /** A tensor as supplied: its name, its shape (null for flat values from Java) and values. */
  private record Supplied(String name, int[] shape, float[] values, boolean roundedFromFloat64) {}

  final String kind;
  final String name;
  private final Map<String, Supplied> supplied = new LinkedHashMap<>();
  private final Map<String, Tensor> taken = new LinkedHashMap<>();

  LayerParts(String kind, String name) {
    this.kind = kind;
    this.name = Objects.requireNonNull(name, "name");
    if (name.isEmpty()) {
      throw new IllegalArgumentException(kind + " layer: the name must not be empty");
    }
  }

  /** Supplies a tensor from Java: row-major values, copied; named {@code <layer>.<role>}. */
  void put(String role, float[] values) {
    Objects.requireNonNull(values, role);
    supplied.put(role, new Supplied(name + "." + role, null, values.clone(), false));
  }

  /** Supplies a tensor read from a file, keeping its name and shape (values not copied). */
  void putRead(String role, String tensorName, int[] shape, float[] values, boolean float64) {
    supplied.put(role, new Supplied(tensorName, shape, values, float64));
  }

  InvalidLayerException error(String problem) {
    return new InvalidLayerException(kind, name, null, null, problem);
  }

  /** Checks that a width or count is at least 1. */
  void checkPositive(String what, long value) {
    if (value < 1) {
      throw error(what + " must be at least 1, got " + value);
    }
  }

  /** Checks that a product of widths is at most {@link #MAX_WIDTH}. */
  void checkNotTooLarge(String what, long value) {
    if (value > MAX_WIDTH) {
      throw error(what + " = " + value + " is too large (at most " + MAX_WIDTH + ")");
    }
  }

  /** Head widths and their products at most this (far beyond any real layer), as files allow. */
  static final int MAX_WIDTH = 1 << 20;

  /** Checks that a number lies in {@code [min, maxExclusive)}. */
  void checkRange(String what, double value, double min, double maxExclusive) {
    if (!(value >= min && value < maxExclusive)) {
      throw error(what + " must be a number in [" + min + ", " + maxExclusive + "), got " + value);
    }
  }

  /**
   * Takes a required tensor: it must have been supplied, have the given shape (flat values: as many
   * as the shape holds) and hold only finite values.
   *
   * @param role the tensor's role in the layer
   * @param why how the shape follows from the settings, for messages
   * @param shape the expected shape
   */
  void take(String role, String why, int... shape) {
    Supplied s = supplied.get(role);
    long size = 1;
    for (int d : shape) {
      size *= d;
    }
    if (s == null) {
      throw error(
          "missing tensor role '" + role + "' (shape " + Arrays.toString(shape) + ": " + why + ")");
    }
    if (s.shape != null && !Arrays.equals(s.shape, shape)) {
      throw tensorError(
          role,
          s,
          "shape "
              + Arrays.toString(s.shape)
              + ", expected "
              + Arrays.toString(shape)
              + " ("
              + why
              + ")");
    }
    if (s.values.length != size) {
      throw tensorError(
          role,
          s,
          s.values.length
              + " values, expected "
              + size
              + " for shape "
              + Arrays.toString(shape)
              + " ("
              + why
              + ")");
    }
    for (int i = 0; i < s.values.length; i++) {
      if (!Float.isFinite(s.values[i])) {
        throw tensorError(
            role,
            s,
            "holds "
                + s.values[i]
                + (Float.isInfinite(s.values[i]) && s.roundedFromFloat64
                    ? " (a float64 value beyond the float32 range)"
                    : "")
                + " at flat index "
                + i
                + "; every weight must be finite");
      }
    }
    taken.put(role, new Tensor(s.name, shape.clone(), s.values));
  }

  /**
   * Checks that every supplied tensor was taken and returns the taken ones.
   *
   * @return the tensors by role, in the order they were taken (the format's order)
   */
  Map<String, Tensor> finish() {
    for (String role : supplied.keySet()) {
      if (!taken.containsKey(role)) {
        throw error(
            "tensor role '"
                + role
                + "' is not used with these hyper-parameters; expected roles "
                + taken.keySet());
      }
    }
    return Collections.unmodifiableMap(new LinkedHashMap<>(taken));
  }

  private InvalidLayerException tensorError(String role, Supplied s, String problem) {
    return new InvalidLayerException(kind, name, role, s.name, problem);
  }
}
