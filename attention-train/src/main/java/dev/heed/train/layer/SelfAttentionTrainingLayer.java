package dev.heed.train.layer;

import dev.heed.attention.HeadShape;
import dev.heed.graph.AttentionPattern;
import dev.heed.model.Activation;
import dev.heed.model.SelfAttentionLayer;
import dev.heed.train.attention.AttentionBackward;
import dev.heed.train.attention.AttentionScore;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * Multi-head scaled dot-product self-attention under training (Vaswani et al. 2017, eq. 1 and
 * §3.2.2), over the pattern of each pass: the complete pattern for full self-attention, or a graph.
 *
 * <pre>
 *   x̃ = dropout(x);  Q = x̃ W_query;  K = x̃ W_key;  V = x̃ W_value        (H heads, node-major)
 *   o_i[h] = Σ_j dropout(α_ij[h]) V_j[h],  α = softmax_j(Q_i[h]·K_j[h] / √keyDim)
 *   y = act(concat_h(o) W_output + bias + residual)      (residual: x̃, or x̃ W_residual)
 * </pre>
 *
 * <p>Parameters (named by their roles in the model file): {@code query_weight [in, H·keyDim]},
 * {@code key_weight [in, H·keyDim]}, {@code value_weight [in, H·valueDim]}, {@code output_weight
 * [H·valueDim, out]}, then {@code bias [out]} if enabled, {@code residual_weight [in, out]} if a
 * residual is enabled and {@code in != out}.
 *
 * <p>{@link #export} gives the serving {@link SelfAttentionLayer} along the pattern given at
 * inference ({@code pattern "graph"}; pass a complete pattern there for full self-attention), with
 * no normalisation and no feed-forward. That block has biases on every projection, a residual that
 * is the identity and no activation, so only layers with output width = input width, identity
 * activation, and residual off or identity map exactly; the query, key and value biases are written
 * as zeros and {@code bias} becomes {@code output_bias}.
 *
 * <pre>{@code
 * SelfAttentionTrainingLayer layer =
 *     SelfAttentionTrainingLayer.builder(64, 8, 8, 8, 64).residual(true).build();
 * }</pre>
 *
 * <p>Cost per pass: O(n·in·H·(keyDim + valueDim) + n·H·valueDim·out) plus the kernel's.
 *
 * <p>Thread safety: mutable, not thread-safe.
 */
public final class SelfAttentionTrainingLayer implements TrainingLayer {

  /** Name of this layer kind in messages. */
  public static final String KIND = "self-attention";

  private final int inputWidth;
  private final int heads;
  private final int keyDim;
  private final int valueDim;
  private final int outputWidth;
  private final Activation activation;
  private final double inputDropout;
  private final double attentionDropout;
  private final boolean residual;
  private final Parameter queryWeight;
  private final Parameter keyWeight;
  private final Parameter valueWeight;
  private final Parameter outputWeight;
  private final Parameter bias;
  private final Parameter residualWeight;
  private final List<Parameter> parameters;
  private final HeadShape shape;
  private final AttentionScore score = AttentionScore.scaledDotProduct();

  private AttentionPattern pattern;
  private double[] inputMask;
  private double[] x;
  private double[] query;
  private double[] key;
  private double[] value;
  private double[] weights;
  private double[] weightMask;
  private double[] aggregated;
  private double[] preActivation;

  private SelfAttentionTrainingLayer(Builder b) {
    this.inputWidth = b.inputWidth;
    this.heads = b.heads;
    this.keyDim = b.keyDim;
    this.valueDim = b.valueDim;
    this.outputWidth = b.outputWidth;
    this.activation = b.activation;
    this.inputDropout = b.inputDropout;
    this.attentionDropout = b.attentionDropout;
    this.residual = b.residual;
    this.shape = new HeadShape(heads, keyDim, valueDim);
    List<Parameter> list = new ArrayList<>();
    queryWeight = new Parameter("query_weight", true, inputWidth, heads * keyDim);
    keyWeight = new Parameter("key_weight", true, inputWidth, heads * keyDim);
    valueWeight = new Parameter("value_weight", true, inputWidth, heads * valueDim);
    outputWeight = new Parameter("output_weight", true, heads * valueDim, outputWidth);
    list.add(queryWeight);
    list.add(keyWeight);
    list.add(valueWeight);
    list.add(outputWeight);
    bias = b.bias ? new Parameter("bias", false, outputWidth) : null;
    if (bias != null) {
      list.add(bias);
    }
    residualWeight =
        residual && inputWidth != outputWidth
            ? new Parameter("residual_weight", true, inputWidth, outputWidth)
            : null;
    if (residualWeight != null) {
      list.add(residualWeight);
    }
    this.parameters = List.copyOf(list);
  }

  /**
   * Starts a builder. Defaults: identity activation, bias on, no residual, no dropout.
   *
   * @param inputWidth features per input node, at least 1
   * @param heads number of heads, at least 1
   * @param keyDim query/key width per head, at least 1
   * @param valueDim value width per head, at least 1
   * @param outputWidth features per output node, at least 1
   * @return the builder
   */
  public static Builder builder(
      int inputWidth, int heads, int keyDim, int valueDim, int outputWidth) {
    return new Builder(inputWidth, heads, keyDim, valueDim, outputWidth);
  }

  /**
   * Builder for {@link SelfAttentionTrainingLayer}.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final int inputWidth;
    private final int heads;
    private final int keyDim;
    private final int valueDim;
    private final int outputWidth;
    private Activation activation = Activation.IDENTITY;
    private boolean bias = true;
    private boolean residual;
    private double inputDropout;
    private double attentionDropout;

    private Builder(int inputWidth, int heads, int keyDim, int valueDim, int outputWidth) {
      this.inputWidth = inputWidth;
      this.heads = heads;
      this.keyDim = keyDim;
      this.valueDim = valueDim;
      this.outputWidth = outputWidth;
    }

    /**
     * Sets the non-linearity applied after the output projection.
     *
     * @param act the activation
     * @return this builder
     */
    public Builder activation(Activation act) {
      this.activation = act;
      return this;
    }

    /**
     * Enables or disables the output bias.
     *
     * @param enabled whether to add a bias
     * @return this builder
     */
    public Builder bias(boolean enabled) {
      this.bias = enabled;
      return this;
    }

    /**
     * Enables or disables the residual connection.
     *
     * @param enabled whether to add the (projected) input
     * @return this builder
     */
    public Builder residual(boolean enabled) {
      this.residual = enabled;
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
     * Sets the dropout rate on the attention weights.
     *
     * @param rate in {@code [0, 1)}
     * @return this builder
     */
    public Builder attentionDropout(double rate) {
      this.attentionDropout = rate;
      return this;
    }

    /**
     * Validates and builds.
     *
     * @return the layer (parameters zero until initialized)
     * @throws IllegalArgumentException if a setting is out of range
     */
    public SelfAttentionTrainingLayer build() {
      LayerMath.checkPositive("inputWidth", inputWidth);
      LayerMath.checkPositive("heads", heads);
      LayerMath.checkPositive("keyDim", keyDim);
      LayerMath.checkPositive("valueDim", valueDim);
      LayerMath.checkPositive("outputWidth", outputWidth);
      java.util.Objects.requireNonNull(activation, "activation");
      LayerMath.checkRate("inputDropout", inputDropout);
      LayerMath.checkRate("attentionDropout", attentionDropout);
      return new SelfAttentionTrainingLayer(this);
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
    LayerMath.glorotUniform(queryWeight, inputWidth, heads * keyDim, random);
    LayerMath.glorotUniform(keyWeight, inputWidth, heads * keyDim, random);
    LayerMath.glorotUniform(valueWeight, inputWidth, heads * valueDim, random);
    LayerMath.glorotUniform(outputWeight, heads * valueDim, outputWidth, random);
    if (bias != null) {
      java.util.Arrays.fill(bias.value(), 0.0);
    }
    if (residualWeight != null) {
      LayerMath.glorotUniform(residualWeight, inputWidth, outputWidth, random);
    }
  }

  @Override
  public double[] forward(double[] input, PassContext context) {
    AttentionPattern p = context.pattern();
    int n = p.nodeCount();
    LayerMath.checkInput(KIND, input, n, inputWidth);
    long weightCount = p.entryCount() * heads;
    if (weightCount > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "entryCount * heads = " + weightCount + " attention weights do not fit in an array");
    }
    pattern = p;
    inputMask = context.dropoutMask(input.length, inputDropout);
    x = LayerMath.masked(input, inputMask);
    query = LayerMath.multiply(x, n, inputWidth, queryWeight.value(), heads * keyDim);
    key = LayerMath.multiply(x, n, inputWidth, keyWeight.value(), heads * keyDim);
    value = LayerMath.multiply(x, n, inputWidth, valueWeight.value(), heads * valueDim);
    aggregated = new double[n * heads * valueDim];
    weights = new double[(int) weightCount];
    context.attention().attend(p, score, shape, query, key, value, aggregated, weights);
    weightMask = context.dropoutMask(weights.length, attentionDropout);
    if (weightMask != null) {
      AttentionBackward.aggregate(
          p, shape, LayerMath.masked(weights, weightMask), value, aggregated);
    }
    preActivation =
        LayerMath.multiply(aggregated, n, heads * valueDim, outputWeight.value(), outputWidth);
    if (bias != null) {
      double[] b = bias.value();
      for (int i = 0; i < preActivation.length; i++) {
        preActivation[i] += b[i % outputWidth];
      }
    }
    if (residual) {
      double[] r =
          residualWeight != null
              ? LayerMath.multiply(x, n, inputWidth, residualWeight.value(), outputWidth)
              : x;
      for (int i = 0; i < preActivation.length; i++) {
        preActivation[i] += r[i];
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
    int n = pattern.nodeCount();
    int hk = heads * keyDim;
    int hv = heads * valueDim;
    double[] dPre = new double[preActivation.length];
    for (int i = 0; i < dPre.length; i++) {
      dPre[i] = outputGradient[i] * activation.derivative(preActivation[i]);
    }
    double[] dx = inputGradient ? new double[n * inputWidth] : null;
    if (bias != null) {
      LayerMath.addColumnSums(dPre, n, outputWidth, bias.gradient());
    }
    if (residual) {
      if (residualWeight != null) {
        LayerMath.addTransposedTimes(
            x, n, inputWidth, dPre, outputWidth, residualWeight.gradient());
        LayerMath.addTimesTransposed(dPre, n, outputWidth, residualWeight.value(), inputWidth, dx);
      } else {
        if (dx != null) {
          for (int i = 0; i < dx.length; i++) {
            dx[i] += dPre[i];
          }
        }
      }
    }
    LayerMath.addTransposedTimes(aggregated, n, hv, dPre, outputWidth, outputWeight.gradient());
    double[] dAggregated = new double[n * hv];
    LayerMath.addTimesTransposed(dPre, n, outputWidth, outputWeight.value(), hv, dAggregated);
    double[] dQuery = new double[n * hk];
    double[] dKey = new double[n * hk];
    double[] dValue = new double[n * hv];
    AttentionBackward.backward(
        pattern,
        score,
        shape,
        query,
        key,
        value,
        weights,
        weightMask,
        dAggregated,
        dQuery,
        dKey,
        dValue,
        null);
    LayerMath.addTransposedTimes(x, n, inputWidth, dQuery, hk, queryWeight.gradient());
    LayerMath.addTimesTransposed(dQuery, n, hk, queryWeight.value(), inputWidth, dx);
    LayerMath.addTransposedTimes(x, n, inputWidth, dKey, hk, keyWeight.gradient());
    LayerMath.addTimesTransposed(dKey, n, hk, keyWeight.value(), inputWidth, dx);
    LayerMath.addTransposedTimes(x, n, inputWidth, dValue, hv, valueWeight.gradient());
    LayerMath.addTimesTransposed(dValue, n, hv, valueWeight.value(), inputWidth, dx);
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
  public SelfAttentionLayer export(String name) {
    if (inputWidth != outputWidth || activation != Activation.IDENTITY) {
      throw new IllegalArgumentException(
          KIND
              + " layer '"
              + name
              + "' ("
              + inputWidth
              + " -> "
              + outputWidth
              + ", "
              + activation
              + "): the model file's self_attention block keeps the width and has no activation;"
              + " train it with output width = input width ("
              + inputWidth
              + ") and activation IDENTITY, and add a dense layer for other widths or"
              + " activations");
    }
    SelfAttentionLayer.Builder b =
        SelfAttentionLayer.builder(name, inputWidth, heads, keyDim, valueDim)
            .queryWeight(LayerMath.rounded(queryWeight))
            .keyWeight(LayerMath.rounded(keyWeight))
            .valueWeight(LayerMath.rounded(valueWeight))
            .outputWeight(LayerMath.rounded(outputWeight))
            .residual(residual);
    if (bias != null) {
      // the training block biases only its output; the served block biases every projection
      b.queryBias(new float[heads * keyDim])
          .keyBias(new float[heads * keyDim])
          .valueBias(new float[heads * valueDim])
          .outputBias(LayerMath.rounded(bias));
    }
    return b.build();
  }

  @Override
  public String toString() {
    return "SelfAttentionTrainingLayer["
        + inputWidth
        + " -> "
        + heads
        + " x ("
        + keyDim
        + ", "
        + valueDim
        + ") -> "
        + outputWidth
        + ", "
        + activation
        + "]";
  }
}
