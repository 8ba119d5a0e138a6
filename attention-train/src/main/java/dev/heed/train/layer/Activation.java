package dev.heed.train.layer;

/**
 * Element-wise non-linearities, with derivatives expressed through the cached pre-activation.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum Activation {
  /** ELU with α = 1 (Clevert et al. 2016): x for x &gt; 0, eˣ − 1 otherwise. */
  ELU {
    @Override
    public double apply(double x) {
      return x > 0 ? x : StrictMath.expm1(x);
    }

    @Override
    public double derivative(double x) {
      return x > 0 ? 1.0 : StrictMath.exp(x);
    }
  },
  /** ReLU: max(x, 0); derivative 0 at 0 (common practice). */
  RELU {
    @Override
    public double apply(double x) {
      return x > 0 ? x : 0.0;
    }

    @Override
    public double derivative(double x) {
      return x > 0 ? 1.0 : 0.0;
    }
  },
  /** The identity (no non-linearity), for output layers that produce logits. */
  IDENTITY {
    @Override
    public double apply(double x) {
      return x;
    }

    @Override
    public double derivative(double x) {
      return 1.0;
    }
  };

  /**
   * Applies the function.
   *
   * @param x the pre-activation
   * @return the activation
   */
  public abstract double apply(double x);

  /**
   * Returns the derivative at {@code x}.
   *
   * @param x the pre-activation
   * @return d apply(x) / dx
   */
  public abstract double derivative(double x);
}
