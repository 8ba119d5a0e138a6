package dev.heed.train.layer;

import java.util.Arrays;
import java.util.Objects;

/**
 * One trainable tensor: a name, a shape, its float64 values and the gradient accumulated by the
 * last backward pass. Row-major: element {@code (r, c)} of a {@code [rows, cols]} parameter is at
 * {@code r * cols + c}.
 *
 * <p>Thread safety: mutable, not thread-safe; owned by one layer and one trainer at a time.
 */
public final class Parameter {

  private final String name;
  private final int[] shape;
  private final double[] value;
  private final double[] gradient;
  private final boolean decayed;

  /**
   * Creates a zero-valued parameter.
   *
   * @param name a short name, unique within its layer (for example {@code "weight"})
   * @param decayed whether weight decay applies to it
   * @param shape the dimensions, each at least 1
   * @throws IllegalArgumentException if a dimension is below 1 or the size exceeds an array
   */
  public Parameter(String name, boolean decayed, int... shape) {
    this.name = Objects.requireNonNull(name, "name");
    this.shape = shape.clone();
    long size = 1;
    for (int d : shape) {
      if (d < 1) {
        throw new IllegalArgumentException(
            "parameter "
                + name
                + " has shape "
                + Arrays.toString(shape)
                + "; every dimension >= 1");
      }
      size *= d;
    }
    if (size > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "parameter " + name + " of shape " + Arrays.toString(shape) + " is too large");
    }
    this.value = new double[(int) size];
    this.gradient = new double[(int) size];
    this.decayed = decayed;
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
   * Returns the number of elements.
   *
   * @return the size
   */
  public int size() {
    return value.length;
  }

  /**
   * Returns whether weight decay applies.
   *
   * @return true for weights, false for parameters excluded from decay
   */
  public boolean decayed() {
    return decayed;
  }

  /**
   * Returns the live value array (not a copy): the optimizer updates it in place.
   *
   * @return the values
   */
  public double[] value() {
    return value;
  }

  /**
   * Returns the live gradient array (not a copy): backward passes accumulate into it.
   *
   * @return the gradient
   */
  public double[] gradient() {
    return gradient;
  }

  /** Sets the gradient to zero. */
  public void clearGradient() {
    Arrays.fill(gradient, 0.0);
  }

  @Override
  public String toString() {
    return "Parameter[" + name + " " + Arrays.toString(shape) + "]";
  }
}
