package dev.heed.train.model;

import java.util.Arrays;
import java.util.Objects;

/**
 * A named float32 tensor: a shape and row-major values. The trained form of one {@link
 * dev.heed.train.layer.Parameter}.
 *
 * <p>Thread safety: immutable; accessors return copies.
 */
public final class NamedTensor {

  private final String name;
  private final int[] shape;
  private final float[] values;

  /**
   * Creates a tensor, copying its arrays.
   *
   * @param name the name, unique within its layer
   * @param shape the dimensions, each at least 1
   * @param values row-major values, as many as the shape's product
   * @throws IllegalArgumentException if the shape and the value count disagree
   */
  public NamedTensor(String name, int[] shape, float[] values) {
    this.name = Objects.requireNonNull(name, "name");
    this.shape = shape.clone();
    this.values = values.clone();
    long size = 1;
    for (int d : this.shape) {
      if (d < 1) {
        throw new IllegalArgumentException(
            "tensor " + name + ": every dimension must be >= 1, got " + Arrays.toString(shape));
      }
      size *= d;
    }
    if (size != this.values.length) {
      throw new IllegalArgumentException(
          "tensor "
              + name
              + ": shape "
              + Arrays.toString(shape)
              + " holds "
              + size
              + " values, got "
              + values.length);
    }
  }

  /**
   * Returns the name.
   *
   * @return the name
   */
  public String name() {
    return name;
  }

  /**
   * Returns a copy of the shape.
   *
   * @return the dimensions
   */
  public int[] shape() {
    return shape.clone();
  }

  /**
   * Returns a copy of the values.
   *
   * @return row-major values
   */
  public float[] values() {
    return values.clone();
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof NamedTensor t
        && t.name.equals(name)
        && Arrays.equals(t.shape, shape)
        && Arrays.equals(t.values, values);
  }

  @Override
  public int hashCode() {
    return (name.hashCode() * 31 + Arrays.hashCode(shape)) * 31 + Arrays.hashCode(values);
  }

  @Override
  public String toString() {
    return name + Arrays.toString(shape);
  }
}
