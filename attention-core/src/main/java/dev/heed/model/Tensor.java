package dev.heed.model;

import java.util.Arrays;

/**
 * One weight tensor of a layer: its name in the model file, its shape and its float32 values in C
 * order. Internal; the arrays are never handed out.
 */
record Tensor(String name, int[] shape, float[] values) {

  float get(int index) {
    return values[index];
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof Tensor t
        && t.name.equals(name)
        && Arrays.equals(t.shape, shape)
        && Arrays.equals(t.values, values);
  }

  @Override
  public int hashCode() {
    return name.hashCode() * 31 + Arrays.hashCode(shape);
  }

  @Override
  public String toString() {
    return name + Arrays.toString(shape);
  }
}
