package dev.heed.model;

import java.io.IOException;
import java.util.Optional;

/**
 * Thrown when a model file is malformed or inconsistent: not a zip, no or bad description, a future
 * format version, an unknown layer kind or key, a missing tensor, a tensor of the wrong type or
 * shape, a non-finite weight. The message starts with the file, then the layer (index, name, kind)
 * and the tensor (name and role) where they apply, then what was wrong and what was expected.
 *
 * <p>Thread safety: immutable after construction.
 */
public final class ModelFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  /** The layer at fault, or null. */
  private final String layer;

  /** The tensor at fault, or null. */
  private final String tensor;

  ModelFormatException(String message, String layer, String tensor, Throwable cause) {
    super(message, cause);
    this.layer = layer;
    this.tensor = tensor;
  }

  /**
   * Returns the name of the layer at fault, if the problem belongs to one.
   *
   * @return the layer name
   */
  public Optional<String> layer() {
    return Optional.ofNullable(layer);
  }

  /**
   * Returns the name of the tensor at fault, if the problem belongs to one.
   *
   * @return the tensor name
   */
  public Optional<String> tensor() {
    return Optional.ofNullable(tensor);
  }
}
