package dev.heed.train.model;

import java.util.List;
import java.util.Map;
import java.util.Objects;

/**
 * One trained layer in plain form: its kind, its hyper-parameters as text, and its tensors.
 *
 * <p>Kinds and keys written by this module:
 *
 * <ul>
 *   <li>{@code graph-attention}: {@code score} ({@code ADDITIVE} or {@code GATV2}), {@code heads},
 *       {@code headWidth}, {@code headMerge}, {@code activation}, {@code negativeSlope}, {@code
 *       bias}, {@code residual}, {@code inputWidth}, {@code outputWidth};
 *   <li>{@code self-attention}: {@code heads}, {@code keyDim}, {@code valueDim}, {@code
 *       activation}, {@code bias}, {@code residual}, {@code inputWidth}, {@code outputWidth};
 *   <li>{@code dense}: {@code activation}, {@code bias}, {@code inputWidth}, {@code outputWidth}.
 * </ul>
 *
 * <p>Thread safety: immutable.
 *
 * @param kind the layer kind
 * @param hyperParameters name to value, in a fixed order
 * @param tensors the trained tensors, in a fixed order
 */
public record TrainedLayer(
    String kind, Map<String, String> hyperParameters, List<NamedTensor> tensors) {

  /**
   * Copies the collections into unmodifiable ones, keeping their order.
   *
   * @param kind see the record description
   * @param hyperParameters see the record description
   * @param tensors see the record description
   * @throws NullPointerException if an argument is null
   */
  public TrainedLayer {
    Objects.requireNonNull(kind, "kind");
    hyperParameters =
        java.util.Collections.unmodifiableMap(new java.util.LinkedHashMap<>(hyperParameters));
    tensors = List.copyOf(tensors);
  }

  /**
   * Returns the tensor with the given name.
   *
   * @param name the tensor name
   * @return the tensor
   * @throws IllegalArgumentException if there is none, listing the names there are
   */
  public NamedTensor tensor(String name) {
    for (NamedTensor t : tensors) {
      if (t.name().equals(name)) {
        return t;
      }
    }
    throw new IllegalArgumentException(
        "layer " + kind + " has no tensor " + name + "; it has " + tensors);
  }
}
