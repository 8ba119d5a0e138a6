package dev.heed.train.layer;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.model.Activation;
import dev.heed.model.GraphAttentionLayer;
import dev.heed.train.attention.AttentionBackward;
import dev.heed.train.attention.AttentionScore;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * A multi-head graph attention layer under training, GAT (Veličković et al. 2018) or GATv2 (Brody
 * et al. 2022), over the pattern of each pass (self-loops are the caller's: GAT's N(i) includes i).
 *
 * <pre>
 *   x̃ = dropout(x)                                          (input dropout)
 *   GAT:   z = x̃ W;  q_i[h] = a_target[h]·z_i[h];  k_j[h] = a_source[h]·z_j[h];  v = z
 *   GATv2: q = x̃ W_target;  k = v = x̃ W_source;  a = the attention vector
 *   o_i[h] = Σ_j dropout(α_ij[h]) v_j[h]                     (α from the attention forward pass)
 *   m_i = concat_h o_i[h]  or  mean_h o_i[h]                 (eq. 5 / eq. 6)
 *   y_i = act(m_i + bias + residual_i)                       (residual: x̃_i, or x̃_i W_residual
 *                                                             when the widths differ)
 * </pre>
 *
 * <p>Parameters (row-major), named by their roles in the model file: GAT {@code weight [in, H·F]},
 * {@code attention_target [H, F]} (a_target), {@code attention_source [H, F]} (a_source); GATv2
 * {@code target_weight [in, H·F]} (W_target), {@code source_weight [in, H·F]} (W_source), {@code
 * attention [H, F]}; then {@code bias [out]} if enabled, {@code residual_weight [in, out]} if a
 * residual is enabled and {@code in != out}. {@link #export} turns the layer into the serving
 * {@link GraphAttentionLayer} of the same equations. Build with {@link #builder}:
 *
 * <pre>{@code
 * GraphAttentionTrainingLayer hidden =
 *     GraphAttentionTrainingLayer.builder(featureCount, 8, 8)
 *         .activation(Activation.ELU)
 *         .inputDropout(0.6)
 *         .attentionDropout(0.6)
 *         .build();
 * }</pre>
 *
 * <p>Cost per pass: O(n·in·H·F) for the projections plus the attention kernel's O(E·H·F).
 *
 * <p>Thread safety: mutable (parameters and the forward cache), not thread-safe.
 */
public final class GraphAttentionTrainingLayer implements TrainingLayer {

  /** Name of this layer kind in messages. */
  public static final String KIND = "graph-attention";

  private final int inputWidth;
  private final int heads;
  private final int headWidth;
  private final AttentionScore.Kind scoreKind;
  private final HeadMerge merge;
  private final Activation activation;
  private final double leakyReluSlope;
  private final double inputDropout;
  private final double attentionDropout;
  private final int outputWidth;

  private final Parameter targetWeight; // GAT: the one projection W ("weight"); GATv2: W_target
  private final Parameter sourceWeight; // GATv2 only: W_source
  private final Parameter targetAttention; // GAT only: a_target
  private final Parameter sourceAttention; // GAT: a_source; GATv2: the attention vector a
  private final Parameter bias;
  private final Parameter residualWeight;
  private final boolean residual;
  private final List<Parameter> parameters;

  // forward cache
  private AttentionPattern pattern;
  private AttentionScore score;
  private HeadShape shape;
  private double[] inputMask;
  private double[] x;
  private double[] projectedTarget;
  private double[] projectedSource;
  private double[] query;
  private double[] key;
  private double[] weights;
  private double[] weightMask;
  private double[] preActivation;

  private GraphAttentionTrainingLayer(Builder b) {
    this.inputWidth = b.inputWidth;
    this.heads = b.heads;
    this.headWidth = b.headWidth;
    this.scoreKind = b.scoreKind;
    this.merge = b.merge;
    this.activation = b.activation;
    this.leakyReluSlope = b.leakyReluSlope;
    this.inputDropout = b.inputDropout;
    this.attentionDropout = b.attentionDropout;
    this.outputWidth = merge.outputWidth(heads, headWidth);
    this.residual = b.residual;
    int hf = heads * headWidth;
    List<Parameter> list = new ArrayList<>();
    if (scoreKind == AttentionScore.Kind.ADDITIVE) {
      targetWeight = add(list, new Parameter("weight", true, inputWidth, hf));
      sourceWeight = null;
      targetAttention = add(list, new Parameter("attention_target", true, heads, headWidth));
      sourceAttention = add(list, new Parameter("attention_source", true, heads, headWidth));
    } else {
      targetWeight = add(list, new Parameter("target_weight", true, inputWidth, hf));
      sourceWeight = add(list, new Parameter("source_weight", true, inputWidth, hf));
      targetAttention = null;
      sourceAttention = add(list, new Parameter("attention", true, heads, headWidth));
    }
    bias = b.bias ? add(list, new Parameter("bias", false, outputWidth)) : null;
    residualWeight =
        b.residual && inputWidth != outputWidth
            ? add(list, new Parameter("residual_weight", true, inputWidth, outputWidth))
            : null;
    this.parameters = List.copyOf(list);
  }

  private static Parameter add(List<Parameter> list, Parameter p) {
    list.add(p);
    return p;
  }

  /**
   * Starts a builder. Defaults: GAT (additive) scores, concatenated heads, ELU, LeakyReLU slope
   * 0.2, bias on, no residual, no dropout.
   *
   * @param inputWidth features per input node, at least 1
   * @param heads number of heads H, at least 1
   * @param headWidth features per head F, at least 1
   * @return the builder
   */
  public static Builder builder(int inputWidth, int heads, int headWidth) {
    return new Builder(inputWidth, heads, headWidth);
  }

  /**
   * Builder for {@link GraphAttentionTrainingLayer}; see there for an example.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final int inputWidth;
    private final int heads;
    private final int headWidth;
    private AttentionScore.Kind scoreKind = AttentionScore.Kind.ADDITIVE;
    private HeadMerge merge = HeadMerge.CONCATENATE;
    private Activation activation = Activation.ELU;
    private double leakyReluSlope = ScoreFunction.GAT_NEGATIVE_SLOPE;
    private boolean bias = true;
    private boolean residual;
    private double inputDropout;
    private double attentionDropout;

    private Builder(int inputWidth, int heads, int headWidth) {
      this.inputWidth = inputWidth;
      this.heads = heads;
      this.headWidth = headWidth;
    }

    /**
     * Sets the score function.
     *
     * @param kind {@code ADDITIVE} (GAT) or {@code GATV2}
     * @return this builder
     */
    public Builder score(AttentionScore.Kind kind) {
      this.scoreKind = kind;
      return this;
    }

    /**
     * Sets how heads combine.
     *
     * @param headMerge concatenate (hidden layers) or mean (output layer)
     * @return this builder
     */
    public Builder headMerge(HeadMerge headMerge) {
      this.merge = headMerge;
      return this;
    }

    /**
     * Sets the non-linearity.
     *
     * @param act the activation; {@code IDENTITY} for logits
     * @return this builder
     */
    public Builder activation(Activation act) {
      this.activation = act;
      return this;
    }

    /**
     * Sets the LeakyReLU slope of the scores for negative inputs.
     *
     * @param slope in {@code [0, 1)}
     * @return this builder
     */
    public Builder leakyReluSlope(double slope) {
      this.leakyReluSlope = slope;
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
     * Enables or disables the residual connection.
     *
     * @param enabled whether to add the (projected) input to the output
     * @return this builder
     */
    public Builder residual(boolean enabled) {
      this.residual = enabled;
      return this;
    }

    /**
     * Sets the dropout rate on the layer's input (Veličković et al. 2018, §3.3).
     *
     * @param rate in {@code [0, 1)}
     * @return this builder
     */
    public Builder inputDropout(double rate) {
      this.inputDropout = rate;
      return this;
    }

    /**
     * Sets the dropout rate on the attention weights α (Veličković et al. 2018, §3.3).
     *
     * @param rate in {@code [0, 1)}
     * @return this builder
     */
    public Builder attentionDropout(double rate) {
      this.attentionDropout = rate;
      return this;
    }

    /**
     * Validates the settings and builds the layer (parameters zero until {@link #initialize}).
     *
     * @return the layer
     * @throws IllegalArgumentException if a setting is out of range
     */
    public GraphAttentionTrainingLayer build() {
      LayerMath.checkPositive("inputWidth", inputWidth);
      LayerMath.checkPositive("heads", heads);
      LayerMath.checkPositive("headWidth", headWidth);
      if (scoreKind == null || scoreKind == AttentionScore.Kind.SCALED_DOT_PRODUCT) {
        throw new IllegalArgumentException(
            "graph attention scores must be ADDITIVE (GAT) or GATV2, got "
                + scoreKind
                + "; use SelfAttentionTrainingLayer for scaled dot-product attention");
      }
      java.util.Objects.requireNonNull(merge, "headMerge");
      java.util.Objects.requireNonNull(activation, "activation");
      AttentionScore.additive(leakyReluSlope); // validates the slope
      LayerMath.checkRate("inputDropout", inputDropout);
      LayerMath.checkRate("attentionDropout", attentionDropout);
      if ((long) heads * headWidth > 1 << 24) {
        throw new IllegalArgumentException(
            "heads * headWidth = " + (long) heads * headWidth + " is too large");
      }
      return new GraphAttentionTrainingLayer(this);
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
    int hf = heads * headWidth;
    LayerMath.glorotUniform(targetWeight, inputWidth, hf, random);
    if (sourceWeight != null) {
      LayerMath.glorotUniform(sourceWeight, inputWidth, hf, random);
    }
    if (targetAttention != null) {
      LayerMath.glorotUniform(targetAttention, headWidth, 1, random);
    }
    LayerMath.glorotUniform(sourceAttention, headWidth, 1, random);
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
    int hf = heads * headWidth;
    pattern = p;
    inputMask = context.dropoutMask(input.length, inputDropout);
    x = LayerMath.masked(input, inputMask);
    double[] value;
    if (scoreKind == AttentionScore.Kind.ADDITIVE) {
      projectedTarget = LayerMath.multiply(x, n, inputWidth, targetWeight.value(), hf);
      projectedSource = null;
      query = new double[n * heads];
      key = new double[n * heads];
      double[] aT = targetAttention.value();
      double[] aS = sourceAttention.value();
      for (int i = 0; i < n; i++) {
        for (int h = 0; h < heads; h++) {
          int zAt = i * hf + h * headWidth;
          double sq = 0;
          double sk = 0;
          for (int f = 0; f < headWidth; f++) {
            sq += aT[h * headWidth + f] * projectedTarget[zAt + f];
            sk += aS[h * headWidth + f] * projectedTarget[zAt + f];
          }
          query[i * heads + h] = sq;
          key[i * heads + h] = sk;
        }
      }
      value = projectedTarget;
      shape = new HeadShape(heads, 1, headWidth);
      score = AttentionScore.additive(leakyReluSlope);
    } else {
      projectedTarget = LayerMath.multiply(x, n, inputWidth, targetWeight.value(), hf);
      projectedSource = LayerMath.multiply(x, n, inputWidth, sourceWeight.value(), hf);
      query = projectedTarget;
      key = projectedSource;
      value = projectedSource;
      shape = new HeadShape(heads, headWidth, headWidth);
      score = AttentionScore.gatv2(leakyReluSlope, sourceAttention.value());
    }
    double[] aggregated = new double[n * hf];
    weights = new double[(int) weightCount];
    context.attention().attend(p, score, shape, query, key, value, aggregated, weights);
    weightMask = context.dropoutMask(weights.length, attentionDropout);
    if (weightMask != null) {
      AttentionBackward.aggregate(
          p, shape, LayerMath.masked(weights, weightMask), value, aggregated);
    }
    preActivation = new double[n * outputWidth];
    if (merge == HeadMerge.CONCATENATE) {
      System.arraycopy(aggregated, 0, preActivation, 0, aggregated.length);
    } else {
      double inv = 1.0 / heads;
      for (int i = 0; i < n; i++) {
        for (int h = 0; h < heads; h++) {
          for (int f = 0; f < headWidth; f++) {
            preActivation[i * headWidth + f] += aggregated[i * hf + h * headWidth + f] * inv;
          }
        }
      }
    }
    if (bias != null) {
      double[] b = bias.value();
      for (int i = 0; i < n; i++) {
        for (int c = 0; c < outputWidth; c++) {
          preActivation[i * outputWidth + c] += b[c];
        }
      }
    }
    if (residual) {
      if (residualWeight != null) {
        double[] r = LayerMath.multiply(x, n, inputWidth, residualWeight.value(), outputWidth);
        for (int i = 0; i < r.length; i++) {
          preActivation[i] += r[i];
        }
      } else {
        for (int i = 0; i < x.length; i++) {
          preActivation[i] += x[i];
        }
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
    int n = pattern.nodeCount();
    int hf = heads * headWidth;
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
    double[] dAggregated;
    if (merge == HeadMerge.CONCATENATE) {
      dAggregated = dPre;
    } else {
      dAggregated = new double[n * hf];
      double inv = 1.0 / heads;
      for (int i = 0; i < n; i++) {
        for (int h = 0; h < heads; h++) {
          for (int f = 0; f < headWidth; f++) {
            dAggregated[i * hf + h * headWidth + f] = dPre[i * headWidth + f] * inv;
          }
        }
      }
    }
    double[] dQuery = new double[query.length];
    double[] dKey = new double[key.length];
    double[] dValue = new double[n * hf];
    if (scoreKind == AttentionScore.Kind.ADDITIVE) {
      AttentionBackward.backward(
          pattern,
          score,
          shape,
          query,
          key,
          projectedTarget,
          weights,
          weightMask,
          dAggregated,
          dQuery,
          dKey,
          dValue,
          null);
      double[] aT = targetAttention.value();
      double[] aS = sourceAttention.value();
      double[] daT = targetAttention.gradient();
      double[] daS = sourceAttention.gradient();
      double[] dz = dValue;
      for (int i = 0; i < n; i++) {
        for (int h = 0; h < heads; h++) {
          double gq = dQuery[i * heads + h];
          double gk = dKey[i * heads + h];
          int zAt = i * hf + h * headWidth;
          for (int f = 0; f < headWidth; f++) {
            int a = h * headWidth + f;
            dz[zAt + f] += gq * aT[a] + gk * aS[a];
            daT[a] += gq * projectedTarget[zAt + f];
            daS[a] += gk * projectedTarget[zAt + f];
          }
        }
      }
      LayerMath.addTransposedTimes(x, n, inputWidth, dz, hf, targetWeight.gradient());
      LayerMath.addTimesTransposed(dz, n, hf, targetWeight.value(), inputWidth, dx);
    } else {
      AttentionBackward.backward(
          pattern,
          score,
          shape,
          query,
          key,
          projectedSource,
          weights,
          weightMask,
          dAggregated,
          dQuery,
          dKey,
          dValue,
          sourceAttention.gradient());
      for (int i = 0; i < dKey.length; i++) {
        dKey[i] += dValue[i];
      }
      LayerMath.addTransposedTimes(x, n, inputWidth, dQuery, hf, targetWeight.gradient());
      LayerMath.addTimesTransposed(dQuery, n, hf, targetWeight.value(), inputWidth, dx);
      LayerMath.addTransposedTimes(x, n, inputWidth, dKey, hf, sourceWeight.gradient());
      LayerMath.addTimesTransposed(dKey, n, hf, sourceWeight.value(), inputWidth, dx);
    }
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

  /**
   * {@inheritDoc}
   *
   * <p>The same equations in the serving layer: GAT or GATv2 with this layer's heads, head
   * combination, LeakyReLU slope, activation and bias; a residual becomes {@code identity} when the
   * input and output widths agree and {@code linear} ({@code residual_weight}) otherwise.
   */
  @Override
  public GraphAttentionLayer export(String name) {
    GraphAttentionLayer.Builder b;
    if (scoreKind == AttentionScore.Kind.ADDITIVE) {
      b =
          GraphAttentionLayer.gat(name, inputWidth, heads, headWidth)
              .weight(LayerMath.rounded(targetWeight))
              .targetAttention(LayerMath.rounded(targetAttention))
              .sourceAttention(LayerMath.rounded(sourceAttention));
    } else {
      b =
          GraphAttentionLayer.gatv2(name, inputWidth, heads, headWidth)
              .targetWeight(LayerMath.rounded(targetWeight))
              .sourceWeight(LayerMath.rounded(sourceWeight))
              .attention(LayerMath.rounded(sourceAttention));
    }
    b.concatenateHeads(merge == HeadMerge.CONCATENATE)
        .leakyReluSlope(leakyReluSlope)
        .activation(activation);
    if (bias != null) {
      b.bias(LayerMath.rounded(bias));
    }
    if (residualWeight != null) {
      b.linearResidual(LayerMath.rounded(residualWeight));
    } else if (residual) {
      b.identityResidual();
    }
    return b.build();
  }

  @Override
  public String toString() {
    return "GraphAttentionTrainingLayer["
        + scoreKind
        + ", "
        + inputWidth
        + " -> "
        + heads
        + " x "
        + headWidth
        + " "
        + merge
        + ", "
        + activation
        + "]";
  }
}
