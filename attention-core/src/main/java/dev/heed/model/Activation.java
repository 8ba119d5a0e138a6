package dev.heed.model;

/**
 * Element-wise non-linearities a layer may apply to its output: in float32 when a model serves, and
 * in float64 with derivatives when a network trains (the trainer in {@code attention-train} uses
 * this same enum, so a trained layer names its activation exactly as the model file does).
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum Activation {
  /** No change: {@code f(x) = x}; for layers that produce class scores. */
  IDENTITY("identity"),
  /** Rectified linear unit: {@code f(x) = max(0, x)}; derivative 0 at 0 (common practice). */
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
   * Applies the function in float64. ELU uses {@link StrictMath#expm1}, so training gives the same
   * bits on every JVM.
   *
   * @param x the pre-activation
   * @return the activation
   */
  public double apply(double x) {
    return switch (this) {
      case IDENTITY -> x;
      case RELU -> x > 0 ? x : 0.0;
      case ELU -> x > 0 ? x : StrictMath.expm1(x);
    };
  }

  /**
   * Returns the derivative at {@code x}, in float64.
   *
   * @param x the pre-activation
   * @return d apply(x) / dx
   */
  public double derivative(double x) {
    return switch (this) {
      case IDENTITY -> 1.0;
      case RELU -> x > 0 ? 1.0 : 0.0;
      case ELU -> x > 0 ? 1.0 : StrictMath.exp(x);
    };
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
