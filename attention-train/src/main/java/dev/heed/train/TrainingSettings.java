package dev.heed.train;

/**
 * Optimizer and schedule settings of a training run. Defaults follow the GAT paper's transductive
 * set-up (Veličković et al. 2018, §3.3, from memory): Adam with learning rate 0.005, L2 weight
 * decay 5e-4, patience 100; Adam's β1 = 0.9, β2 = 0.999, ε = 1e-8 (Kingma &amp; Ba 2015, Algorithm
 * 1).
 *
 * <pre>{@code
 * TrainingSettings settings = TrainingSettings.builder().maxEpochs(300).seed(42).build();
 * }</pre>
 *
 * <p>Thread safety: immutable.
 *
 * @param learningRate Adam step size, positive
 * @param beta1 first-moment decay, in [0, 1)
 * @param beta2 second-moment decay, in [0, 1)
 * @param epsilon Adam's denominator guard, positive
 * @param weightDecay L2 coefficient λ added to the gradient as λ·θ for decayed parameters, at least
 *     0
 * @param maxEpochs epoch limit, at least 1
 * @param patience epochs without a better validation loss or accuracy before stopping, at least 1
 * @param seed seed of every random draw (initialization and dropout)
 */
public record TrainingSettings(
    double learningRate,
    double beta1,
    double beta2,
    double epsilon,
    double weightDecay,
    int maxEpochs,
    int patience,
    long seed) {

  /** Default learning rate, 0.005. */
  public static final double LEARNING_RATE_DEFAULT = 0.005;

  /** Default weight decay, 5e-4. */
  public static final double WEIGHT_DECAY_DEFAULT = 5e-4;

  /** Default epoch limit, 1000. */
  public static final int MAX_EPOCHS_DEFAULT = 1000;

  /** Default patience, 100 epochs. */
  public static final int PATIENCE_DEFAULT = 100;

  /**
   * Validates the settings.
   *
   * @param learningRate see the record description
   * @param beta1 see the record description
   * @param beta2 see the record description
   * @param epsilon see the record description
   * @param weightDecay see the record description
   * @param maxEpochs see the record description
   * @param patience see the record description
   * @param seed see the record description
   * @throws IllegalArgumentException naming the setting and value out of range
   */
  public TrainingSettings {
    if (!(learningRate > 0) || !Double.isFinite(learningRate)) {
      throw new IllegalArgumentException("learningRate must be positive, got " + learningRate);
    }
    if (!(beta1 >= 0 && beta1 < 1)) {
      throw new IllegalArgumentException("beta1 must be in [0, 1), got " + beta1);
    }
    if (!(beta2 >= 0 && beta2 < 1)) {
      throw new IllegalArgumentException("beta2 must be in [0, 1), got " + beta2);
    }
    if (!(epsilon > 0) || !Double.isFinite(epsilon)) {
      throw new IllegalArgumentException("epsilon must be positive, got " + epsilon);
    }
    if (!(weightDecay >= 0) || !Double.isFinite(weightDecay)) {
      throw new IllegalArgumentException("weightDecay must be >= 0, got " + weightDecay);
    }
    if (maxEpochs < 1) {
      throw new IllegalArgumentException("maxEpochs must be at least 1, got " + maxEpochs);
    }
    if (patience < 1) {
      throw new IllegalArgumentException("patience must be at least 1, got " + patience);
    }
  }

  /**
   * Starts a builder holding the defaults, seed 0.
   *
   * @return the builder
   */
  public static Builder builder() {
    return new Builder();
  }

  /**
   * Builder for {@link TrainingSettings}.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private double learningRate = LEARNING_RATE_DEFAULT;
    private double beta1 = 0.9;
    private double beta2 = 0.999;
    private double epsilon = 1e-8;
    private double weightDecay = WEIGHT_DECAY_DEFAULT;
    private int maxEpochs = MAX_EPOCHS_DEFAULT;
    private int patience = PATIENCE_DEFAULT;
    private long seed;

    private Builder() {}

    /**
     * Sets the learning rate.
     *
     * @param value positive
     * @return this builder
     */
    public Builder learningRate(double value) {
      this.learningRate = value;
      return this;
    }

    /**
     * Sets Adam's moment decays.
     *
     * @param b1 first-moment decay in [0, 1)
     * @param b2 second-moment decay in [0, 1)
     * @return this builder
     */
    public Builder betas(double b1, double b2) {
      this.beta1 = b1;
      this.beta2 = b2;
      return this;
    }

    /**
     * Sets Adam's ε.
     *
     * @param value positive
     * @return this builder
     */
    public Builder epsilon(double value) {
      this.epsilon = value;
      return this;
    }

    /**
     * Sets the L2 weight decay.
     *
     * @param value at least 0
     * @return this builder
     */
    public Builder weightDecay(double value) {
      this.weightDecay = value;
      return this;
    }

    /**
     * Sets the epoch limit.
     *
     * @param value at least 1
     * @return this builder
     */
    public Builder maxEpochs(int value) {
      this.maxEpochs = value;
      return this;
    }

    /**
     * Sets the early-stopping patience.
     *
     * @param value at least 1
     * @return this builder
     */
    public Builder patience(int value) {
      this.patience = value;
      return this;
    }

    /**
     * Sets the seed.
     *
     * @param value any long
     * @return this builder
     */
    public Builder seed(long value) {
      this.seed = value;
      return this;
    }

    /**
     * Validates and builds.
     *
     * @return the settings
     * @throws IllegalArgumentException if a value is out of range
     */
    public TrainingSettings build() {
      return new TrainingSettings(
          learningRate, beta1, beta2, epsilon, weightDecay, maxEpochs, patience, seed);
    }
  }
}
