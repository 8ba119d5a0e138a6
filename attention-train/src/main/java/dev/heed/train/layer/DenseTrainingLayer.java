package dev.heed.train.layer;

import dev.heed.model.Activation;
import dev.heed.model.DenseLayer;
import java.util.List;
import java.util.SplittableRandom;

/**
 * A dense (fully connected) layer under training, applied to every node alone: {@code y = act(x̃ W
 * + b)} with {@code x̃ = dropout(x)}. Parameters: {@code weight [in, out]}, then {@code bias [out]}
 * if enabled. It ignores the graph, so a stack of dense layers is the features-only baseline.
 * {@link #export} gives the serving {@link DenseLayer}.
 *
 * <pre>{@code
 * DenseTrainingLayer layer = DenseTrainingLayer.builder(64, 7).activation(Activation.IDENTITY).build();
 * }</pre>
 *
 * <p>Cost per pass: O(n·in·out).
 *
 * <p>Thread safety: mutable, not thread-safe.
 */
public final class DenseTrainingLayer implements TrainingLayer {

  /** Name of this layer kind in messages. */
  public static final String KIND = "dense";

  private final int inputWidth;
  private final int outputWidth;
  private final Activation activation;
  private final double inputDropout;
  private final Parameter weight;
  private final Parameter bias;
  private final List<Parameter> parameters;

  private int nodes;
  private double[] inputMask;
  private double[] x;
  private double[] preActivation;

  private DenseTrainingLayer(Builder b) {
    this.inputWidth = b.inputWidth;
    this.outputWidth = b.outputWidth;
    this.activation = b.activation;
    this.inputDropout = b.inputDropout;
    this.weight = new Parameter("weight", true, inputWidth, outputWidth);
    this.bias = b.bias ? new Parameter("bias", false, outputWidth) : null;
    this.parameters = bias == null ? List.of(weight) : List.of(weight, bias);
  }

  /**
   * Starts a builder. Defaults: ReLU, bias on, no dropout.
   *
   * @param inputWidth features per input node, at least 1
   * @param outputWidth features per output node, at least 1
   * @return the builder
   */
  public static Builder builder(int inputWidth, int outputWidth) {
    return new Builder(inputWidth, outputWidth);
  }

  /**
   * Builder for {@link DenseTrainingLayer}.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final int inputWidth;
    private final int outputWidth;
    private Activation activation = Activation.RELU;
    private boolean bias = true;
    private double inputDropout;

    private Builder(int inputWidth, int outputWidth) {
      this.inputWidth = inputWidth;
      this.outputWidth = outputWidth;
    }

    /**
     * Sets the non-linearity.
     *
     * @param act the activation
     * @return this builder
     */
    public Builder activation(Activation act) {
      this.activation = act;
      return this;
    }

    /**
     * Enables or disables the bias.
     *
     * @param enabled whether to add a bias
     * @return this builder
     */
    public Builder bias(boolean enabled) {
      this.bias = enabled;
      return this;
    }

    /**
     * Sets the input dropout rate.
     *
     * @param rate in {@code [0, 1)}
     * @return this builder
     */
    public Builder inputDropout(double rate) {
      this.inputDropout = rate;
      return this;
    }

    /**
     * Validates and builds.
     *
     * @return the layer (parameters zero until initialized)
     * @throws IllegalArgumentException if a setting is out of range
     */
    public DenseTrainingLayer build() {
      LayerMath.checkPositive("inputWidth", inputWidth);
      LayerMath.checkPositive("outputWidth", outputWidth);
      java.util.Objects.requireNonNull(activation, "activation");
      LayerMath.checkRate("inputDropout", inputDropout);
      return new DenseTrainingLayer(this);
    }
  }

  @Override
  public int inputWidth() {
    return inputWidth;
  }

  @Override
  public int outputWidth() {
    return outputWidth;
  }

  @Override
  public void initialize(SplittableRandom random) {
    LayerMath.glorotUniform(weight, inputWidth, outputWidth, random);
    if (bias != null) {
      java.util.Arrays.fill(bias.value(), 0.0);
    }
  }

  @Override
  public double[] forward(double[] input, PassContext context) {
    nodes = context.pattern().nodeCount();
    LayerMath.checkInput(KIND, input, nodes, inputWidth);
    inputMask = context.dropoutMask(input.length, inputDropout);
    x = LayerMath.masked(input, inputMask);
    preActivation = LayerMath.multiply(x, nodes, inputWidth, weight.value(), outputWidth);
    if (bias != null) {
      double[] b = bias.value();
      for (int i = 0; i < preActivation.length; i++) {
        preActivation[i] += b[i % outputWidth];
      }
    }
    double[] out = new double[preActivation.length];
    for (int i = 0; i < out.length; i++) {
      out[i] = activation.apply(preActivation[i]);
    }
    return out;
  }

  @Override
  public double[] backward(double[] outputGradient, boolean inputGradient) {
    if (preActivation == null) {
      throw new IllegalStateException("backward called before forward");
    }
    if (outputGradient.length != preActivation.length) {
      throw new IllegalArgumentException(
          "output gradient must have length "
              + preActivation.length
              + ", got "
              + outputGradient.length);
    }
    double[] dPre = new double[preActivation.length];
    for (int i = 0; i < dPre.length; i++) {
      dPre[i] = outputGradient[i] * activation.derivative(preActivation[i]);
    }
    if (bias != null) {
      LayerMath.addColumnSums(dPre, nodes, outputWidth, bias.gradient());
    }
    LayerMath.addTransposedTimes(x, nodes, inputWidth, dPre, outputWidth, weight.gradient());
    double[] dx = inputGradient ? new double[nodes * inputWidth] : null;
    LayerMath.addTimesTransposed(dPre, nodes, outputWidth, weight.value(), inputWidth, dx);
    if (inputMask != null && dx != null) {
      for (int i = 0; i < dx.length; i++) {
        dx[i] *= inputMask[i];
      }
    }
    return dx;
  }

  @Override
  public List<Parameter> parameters() {
    return parameters;
  }

  @Override
  public DenseLayer export(String name) {
    DenseLayer.Builder b =
        DenseLayer.builder(name, inputWidth, outputWidth)
            .weight(LayerMath.rounded(weight))
            .activation(activation);
    if (bias != null) {
      b.bias(LayerMath.rounded(bias));
    }
    return b.build();
  }

  @Override
  public String toString() {
    return "DenseTrainingLayer[" + inputWidth + " -> " + outputWidth + ", " + activation + "]";
  }
}
