package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import java.util.Map;
import java.util.Objects;

/**
 * A position-wise linear layer with optional bias and activation: {@code y_i = act(x_i · W + b)}
 * for every node i. Tensors {@code weight} [in, units] and, if {@code bias}, {@code bias} [units].
 * No information moves between nodes. Layers come from model files or from {@link #builder}:
 *
 * <pre>{@code
 * DenseLayer classifier = DenseLayer.builder("classifier", 64, 3).weight(w).bias(b).build();
 * }</pre>
 *
 * <p>Cost per call: O(n·in·units).
 *
 * <p>Thread safety: immutable.
 */
public final class DenseLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "dense";

  private static final String WEIGHT = "weight";
  private static final String BIAS = "bias";

  private final Activation activation;
  private final Map<String, Tensor> tensors;

  private DenseLayer(Builder b, Map<String, Tensor> t) {
    super(b.parts.name, b.inputWidth, b.units);
    this.activation = b.activation;
    this.tensors = t;
  }

  /**
   * Starts a dense layer. Supply {@link Builder#weight}. Defaults: no bias, identity activation.
   *
   * @param name the layer's name, unique within its model, not empty
   * @param inputWidth features per node the layer reads, at least 1
   * @param units features per node it writes, at least 1
   * @return the builder
   */
  public static Builder builder(String name, int inputWidth, int units) {
    return new Builder(name, inputWidth, units);
  }

  static DenseLayer read(LayerReader r) throws ModelFormatException {
    Builder b = new Builder(r.name, r.inputWidth, r.integer("units", 1));
    b.bias = r.bool("bias", true);
    b.activation = r.activation("activation", Activation.IDENTITY);
    return r.build(b.parts, b::build);
  }

  /**
   * Builder for {@link DenseLayer}; start with {@link DenseLayer#builder}. Tensors are row-major
   * float arrays, copied when supplied.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final LayerParts parts;
    private final int inputWidth;
    private final int units;
    private boolean bias;
    private Activation activation = Activation.IDENTITY;

    private Builder(String name, int inputWidth, int units) {
      this.parts = new LayerParts(KIND, name);
      this.inputWidth = inputWidth;
      this.units = units;
    }

    /**
     * Sets the weight W.
     *
     * @param values input, copied: [in, units]
     * @return this builder
     */
    public Builder weight(float[] values) {
      parts.put(WEIGHT, values);
      return this;
    }

    /**
     * Adds a bias.
     *
     * @param values input, copied: [units]
     * @return this builder
     */
    public Builder bias(float[] values) {
      parts.put(BIAS, values);
      this.bias = true;
      return this;
    }

    /**
     * Sets the activation applied after the affine map.
     *
     * @param act the activation
     * @return this builder
     */
    public Builder activation(Activation act) {
      this.activation = Objects.requireNonNull(act, "activation");
      return this;
    }

    /**
     * Checks the settings and tensors and builds the layer.
     *
     * @return the layer
     * @throws IllegalArgumentException if a width is below 1, or a tensor is missing, of the wrong
     *     length, not finite or not used (the message names the layer and tensor)
     */
    public DenseLayer build() {
      parts.checkPositive("input width", inputWidth);
      parts.checkPositive("units", units);
      parts.take(WEIGHT, "input width by units", inputWidth, units);
      if (bias) {
        parts.take(BIAS, "units", units);
      }
      return new DenseLayer(this, parts.finish());
    }
  }

  @Override
  public String kind() {
    return KIND;
  }

  /**
   * Returns the activation applied after the affine map.
   *
   * @return the activation
   */
  public Activation activation() {
    return activation;
  }

  @Override
  float[] forward(float[] input, ForwardPass pass) {
    Tensor b = tensors.get(BIAS);
    float[] y =
        ModelMath.project(
            input,
            pass.rowsOut,
            inputWidth(),
            tensors.get(WEIGHT).values(),
            outputWidth(),
            b == null ? null : b.values());
    activation.applyInPlace(y);
    return y;
  }

  @Override
  Map<String, Tensor> tensors() {
    return tensors;
  }

  @Override
  void writeHyperParameters(ObjectNode json) {
    json.put("units", outputWidth());
    json.put("bias", tensors.containsKey(BIAS));
    json.put("activation", activation.fileName());
  }
}
