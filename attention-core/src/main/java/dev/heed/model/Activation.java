package dev.heed.model;

/**
 * Element-wise non-linearities a layer may apply to its output.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum Activation {
  /** No change: {@code f(x) = x}. */
  IDENTITY("identity"),
  /** Rectified linear unit: {@code f(x) = max(0, x)}. */
  RELU("relu"),
  /**
   * Exponential linear unit with α = 1 (Clevert et al. 2016): {@code x} if {@code x > 0}, else
   * {@code eˣ − 1}.
   */
  ELU("elu");

  private final String fileName;

  Activation(String fileName) {
    this.fileName = fileName;
  }

  /**
   * Returns the name used in model files ({@code "identity"}, {@code "relu"}, {@code "elu"}).
   *
   * @return the name
   */
  public String fileName() {
    return fileName;
  }

  /**
   * Applies the function to every element, in place.
   *
   * @param values input and output
   */
  void applyInPlace(float[] values) {
    switch (this) {
      case IDENTITY -> {}
      case RELU -> {
        for (int i = 0; i < values.length; i++) {
          values[i] = Math.max(0f, values[i]);
        }
      }
      case ELU -> {
        for (int i = 0; i < values.length; i++) {
          float x = values[i];
          values[i] = x > 0f ? x : (float) Math.expm1(x);
        }
      }
    }
  }

  static Activation forFileName(String name) {
    for (Activation a : values()) {
      if (a.fileName.equals(name)) {
        return a;
      }
    }
    return null;
  }
}
