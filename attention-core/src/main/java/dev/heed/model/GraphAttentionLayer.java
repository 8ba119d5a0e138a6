package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.Arrays;
import java.util.List;
import java.util.Map;
import java.util.Objects;

/**
 * Multi-head graph attention over the call's graph, with GAT or GATv2 scores. For each head h
 * (width d), with projected features {@code z_j = W h_j}:
 *
 * <ul>
 *   <li>GAT (Veličković et al. 2018, eqs. 1–4): {@code e_ij = LeakyReLU(a_targetᵀ z_i + a_sourceᵀ
 *       z_j)}, the split form of {@code aᵀ[z_i ‖ z_j]}; values {@code z_j}. Tensors {@code weight}
 *       [in, H·d], {@code attention_target} [H, d] (a_target, the first half of a), {@code
 *       attention_source} [H, d] (a_source, the second half).
 *   <li>GATv2 (Brody et al. 2022): {@code e_ij = aᵀ LeakyReLU(W_target h_i + W_source h_j)}; values
 *       {@code W_source h_j}. Tensors {@code target_weight} [in, H·d], {@code source_weight} [in,
 *       H·d], {@code attention} [H, d].
 * </ul>
 *
 * <p>Then {@code α_ij} = softmax over the sources j of target i, head outputs {@code Σ_j α_ij v_j},
 * heads concatenated (eq. 5, output width H·d) or averaged (eq. 6, width d), plus {@code bias} if
 * present, plus the residual if any ({@code identity}: the input, needs in = out; {@code linear}:
 * {@code input · residual_weight}), and finally the activation. The layer adds no self-loops: the
 * paper's N(i) includes i, so build the graph with self-loops (a graph builder policy) to match it.
 * A node with no sources gets zeros from attention (then bias, residual and activation).
 *
 * <p>Layers come from model files or from {@link #gat} and {@link #gatv2}:
 *
 * <pre>{@code
 * GraphAttentionLayer hidden =
 *     GraphAttentionLayer.gat("hidden", 6, 8, 8)      // 6 features in, 8 heads of width 8
 *         .weight(w)                                  // [6, 64], row-major
 *         .targetAttention(aTarget)                   // [8, 8]
 *         .sourceAttention(aSource)                   // [8, 8]
 *         .bias(b)                                    // [64]
 *         .activation(Activation.ELU)
 *         .build();
 * }</pre>
 *
 * <p>Cost per call: O(n·in·H·d) for the projections plus the kernel's O(E·H·d) (sparse) or
 * O(n²·H·d) (dense).
 *
 * <p>Thread safety: immutable.
 */
public final class GraphAttentionLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "graph_attention";

  /** LeakyReLU slope when none is given: 0.2, as in Veličković et al. 2018, §2.1. */
  public static final double DEFAULT_LEAKY_RELU_SLOPE = 0.2;

  private static final String WEIGHT = "weight";
  private static final String TARGET_ATTENTION = "attention_target";
  private static final String SOURCE_ATTENTION = "attention_source";
  private static final String TARGET_WEIGHT = "target_weight";
  private static final String SOURCE_WEIGHT = "source_weight";
  private static final String ATTENTION = "attention";
  private static final String BIAS = "bias";
  private static final String RESIDUAL_WEIGHT = "residual_weight";

  private final boolean gatv2;
  private final int heads;
  private final int headWidth;
  private final boolean concat;
  private final double leakyReluSlope;
  private final Activation activation;
  private final String residual;
  private final Map<String, Tensor> tensors;
  private final ScoreFunction score;

  private GraphAttentionLayer(Builder b, Map<String, Tensor> tensors) {
    super(b.parts.name, b.inputWidth, b.concat ? b.heads * b.headWidth : b.headWidth);
    this.gatv2 = b.gatv2;
    this.heads = b.heads;
    this.headWidth = b.headWidth;
    this.concat = b.concat;
    this.leakyReluSlope = b.leakyReluSlope;
    this.activation = b.activation;
    this.residual = b.residual;
    this.tensors = tensors;
    if (gatv2) {
      this.score = ScoreFunction.gatv2((float) leakyReluSlope, tensors.get(ATTENTION).values());
    } else {
      this.score = ScoreFunction.additive((float) leakyReluSlope);
    }
  }

  /**
   * Starts a GAT layer (Veličković et al. 2018). Supply {@link Builder#weight}, {@link
   * Builder#targetAttention} and {@link Builder#sourceAttention}. Defaults: heads concatenated,
   * LeakyReLU slope {@value #DEFAULT_LEAKY_RELU_SLOPE}, identity activation, no bias, no residual.
   *
   * @param name the layer's name, unique within its model, not empty
   * @param inputWidth features per node the layer reads, at least 1
   * @param heads number of heads H, at least 1
   * @param headWidth each head's output width d, at least 1
   * @return the builder
   */
  public static Builder gat(String name, int inputWidth, int heads, int headWidth) {
    return new Builder(false, name, inputWidth, heads, headWidth);
  }

  /**
   * Starts a GATv2 layer (Brody et al. 2022). Supply {@link Builder#targetWeight}, {@link
   * Builder#sourceWeight} and {@link Builder#attention}. Defaults as for {@link #gat}.
   *
   * @param name the layer's name, unique within its model, not empty
   * @param inputWidth features per node the layer reads, at least 1
   * @param heads number of heads H, at least 1
   * @param headWidth each head's output width d, at least 1
   * @return the builder
   */
  public static Builder gatv2(String name, int inputWidth, int heads, int headWidth) {
    return new Builder(true, name, inputWidth, heads, headWidth);
  }

  static GraphAttentionLayer read(LayerReader r) throws ModelFormatException {
    boolean v2 = r.string("score", List.of("gat", "gatv2")).equals("gatv2");
    Builder b =
        new Builder(v2, r.name, r.inputWidth, r.integer("heads", 1), r.integer("head_width", 1));
    b.concat = r.string("combine_heads", List.of("concat", "mean")).equals("concat");
    b.leakyReluSlope = r.number("leaky_relu_slope", DEFAULT_LEAKY_RELU_SLOPE, 0, 1);
    b.activation = r.activation("activation", Activation.IDENTITY);
    b.bias = r.bool("bias", false);
    b.residual = r.string("residual", "none", List.of("none", "identity", "linear"));
    return r.build(b.parts, b::build);
  }

  /**
   * Builder for {@link GraphAttentionLayer}; start with {@link #gat} or {@link #gatv2}. Tensors are
   * row-major float arrays, copied when supplied; {@link #build} checks every length and value
   * against the settings.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final boolean gatv2;
    private final int inputWidth;
    private final int heads;
    private final int headWidth;
    private final LayerParts parts;
    private boolean concat = true;
    private double leakyReluSlope = DEFAULT_LEAKY_RELU_SLOPE;
    private Activation activation = Activation.IDENTITY;
    private boolean bias;
    private String residual = "none";

    private Builder(boolean gatv2, String name, int inputWidth, int heads, int headWidth) {
      this.gatv2 = gatv2;
      this.parts = new LayerParts(KIND, name);
      this.inputWidth = inputWidth;
      this.heads = heads;
      this.headWidth = headWidth;
    }

    /**
     * Sets how heads combine.
     *
     * @param concatenate true: concatenate (eq. 5, output width H·d, the default); false: average
     *     (eq. 6, output width d)
     * @return this builder
     */
    public Builder concatenateHeads(boolean concatenate) {
      this.concat = concatenate;
      return this;
    }

    /**
     * Sets the LeakyReLU slope for negative scores.
     *
     * @param slope in {@code [0, 1)}
     * @return this builder
     */
    public Builder leakyReluSlope(double slope) {
      this.leakyReluSlope = slope;
      return this;
    }

    /**
     * Sets the activation applied last.
     *
     * @param act the activation
     * @return this builder
     */
    public Builder activation(Activation act) {
      this.activation = Objects.requireNonNull(act, "activation");
      return this;
    }

    /**
     * GAT: sets the projection W, shared by targets and sources.
     *
     * @param values input, copied: [in, H·d], head h in columns h·d … h·d+d−1
     * @return this builder
     */
    public Builder weight(float[] values) {
      parts.put(WEIGHT, values);
      return this;
    }

    /**
     * GAT: sets a_target, the half of the attention vector applied to the target's features.
     *
     * @param values input, copied: [H, d]
     * @return this builder
     */
    public Builder targetAttention(float[] values) {
      parts.put(TARGET_ATTENTION, values);
      return this;
    }

    /**
     * GAT: sets a_source, the half of the attention vector applied to the source's features.
     *
     * @param values input, copied: [H, d]
     * @return this builder
     */
    public Builder sourceAttention(float[] values) {
      parts.put(SOURCE_ATTENTION, values);
      return this;
    }

    /**
     * GATv2: sets W_target, the projection of the target's features.
     *
     * @param values input, copied: [in, H·d]
     * @return this builder
     */
    public Builder targetWeight(float[] values) {
      parts.put(TARGET_WEIGHT, values);
      return this;
    }

    /**
     * GATv2: sets W_source, the projection of the source's features (also the values).
     *
     * @param values input, copied: [in, H·d]
     * @return this builder
     */
    public Builder sourceWeight(float[] values) {
      parts.put(SOURCE_WEIGHT, values);
      return this;
    }

    /**
     * GATv2: sets the attention vector a of each head.
     *
     * @param values input, copied: [H, d]
     * @return this builder
     */
    public Builder attention(float[] values) {
      parts.put(ATTENTION, values);
      return this;
    }

    /**
     * Adds a bias after the heads are combined.
     *
     * @param values input, copied: [output width]
     * @return this builder
     */
    public Builder bias(float[] values) {
      parts.put(BIAS, values);
      this.bias = true;
      return this;
    }

    /**
     * Adds the input to the output, before the activation; needs input width = output width.
     *
     * @return this builder
     */
    public Builder identityResidual() {
      this.residual = "identity";
      return this;
    }

    /**
     * Adds {@code input · residualWeight} to the output, before the activation.
     *
     * @param residualWeight input, copied: [in, output width]
     * @return this builder
     */
    public Builder linearResidual(float[] residualWeight) {
      parts.put(RESIDUAL_WEIGHT, residualWeight);
      this.residual = "linear";
      return this;
    }

    /**
     * Checks the settings and tensors and builds the layer.
     *
     * @return the layer
     * @throws IllegalArgumentException if a setting is out of range, a tensor is missing, of the
     *     wrong length or not finite, or a tensor was supplied that these settings do not use (the
     *     message names the layer and tensor)
     */
    public GraphAttentionLayer build() {
      int in = inputWidth;
      parts.checkPositive("input width", in);
      parts.checkPositive("heads", heads);
      parts.checkPositive("head_width", headWidth);
      parts.checkNotTooLarge("heads * head_width", (long) heads * headWidth);
      parts.checkRange("leaky_relu_slope", leakyReluSlope, 0, 1);
      int hd = heads * headWidth;
      int out = concat ? hd : headWidth;
      if (residual.equals("identity") && in != out) {
        throw parts.error(
            "residual 'identity' needs input width = output width, got "
                + in
                + " and "
                + out
                + "; use residual 'linear' with a residual_weight tensor");
      }
      String proj = "input width " + in + " by heads * head_width = " + heads + " * " + headWidth;
      String att = "heads by head_width";
      if (gatv2) {
        parts.take(TARGET_WEIGHT, proj, in, hd);
        parts.take(SOURCE_WEIGHT, proj, in, hd);
        parts.take(ATTENTION, att, heads, headWidth);
      } else {
        parts.take(WEIGHT, proj, in, hd);
        parts.take(TARGET_ATTENTION, att, heads, headWidth);
        parts.take(SOURCE_ATTENTION, att, heads, headWidth);
      }
      if (bias) {
        parts.take(BIAS, "the output width " + out, out);
      }
      if (residual.equals("linear")) {
        parts.take(RESIDUAL_WEIGHT, "input width by output width", in, out);
      }
      return new GraphAttentionLayer(this, parts.finish());
    }
  }

  @Override
  public String kind() {
    return KIND;
  }

  @Override
  public int attentionHeads() {
    return heads;
  }

  /** The layer's score function (package-private: the path rule and its tests read it). */
  ScoreFunction score() {
    return score;
  }

  /**
   * Returns the score function's name in model files.
   *
   * @return {@code "gat"} or {@code "gatv2"}
   */
  public String scoreName() {
    return gatv2 ? "gatv2" : "gat";
  }

  /**
   * Returns the width of each head's output, d.
   *
   * @return the head width
   */
  public int headWidth() {
    return headWidth;
  }

  /**
   * Returns whether heads are concatenated (eq. 5) rather than averaged (eq. 6).
   *
   * @return true for concatenation
   */
  public boolean concatenatesHeads() {
    return concat;
  }

  @Override
  int widestRow() {
    return Math.max(super.widestRow(), heads * headWidth);
  }

  @Override
  Reach reach() {
    return Reach.IN_NEIGHBOURS;
  }

  @Override
  float[] forward(float[] input, ForwardPass pass) {
    AttentionInputs in = prepareAttention(input, pass.rowsIn, pass.rowsOut);
    float[] attended =
        pass.attend(this, pass.pattern, in.score(), in.shape(), in.query(), in.key(), in.value());
    return finishAttention(input, attended, pass.rowsOut);
  }

  @Override
  AttentionInputs prepareAttention(float[] input, int n, int m) {
    int in = inputWidth();
    int hd = heads * headWidth;
    if (gatv2) {
      float[] query =
          ModelMath.padTo(
              ModelMath.project(input, m, in, tensors.get(TARGET_WEIGHT).values(), hd, null),
              n * hd);
      float[] value =
          ModelMath.project(input, n, in, tensors.get(SOURCE_WEIGHT).values(), hd, null);
      return new AttentionInputs(
          score, new HeadShape(heads, headWidth, headWidth), query, value, value);
    }
    float[] value = ModelMath.project(input, n, in, tensors.get(WEIGHT).values(), hd, null);
    float[] query = headDots(value, m, n, tensors.get(TARGET_ATTENTION).values());
    float[] key = headDots(value, n, n, tensors.get(SOURCE_ATTENTION).values());
    return new AttentionInputs(score, new HeadShape(heads, 1, headWidth), query, key, value);
  }

  /**
   * Returns how many values {@link #project} keeps per node: GAT, the projected features (heads ×
   * headWidth) and the source and target terms of each head; GATv2, the source and target
   * projections (2 × heads × headWidth).
   */
  int projectionWidth() {
    int hd = heads * headWidth;
    return gatv2 ? 2 * hd : hd + 2 * heads;
  }

  /**
   * The per-node part of the layer: what {@link #forward} computes from each input row alone,
   * {@code rows} × {@link #projectionWidth()} values, row-major. A node's row depends only on its
   * own input row, so incremental scoring keeps it and recomputes it only when that row changes.
   */
  float[] project(float[] input, int rows) {
    int in = inputWidth();
    int hd = heads * headWidth;
    int width = projectionWidth();
    float[] out = new float[rows * width];
    if (gatv2) {
      float[] source =
          ModelMath.project(input, rows, in, tensors.get(SOURCE_WEIGHT).values(), hd, null);
      float[] target =
          ModelMath.project(input, rows, in, tensors.get(TARGET_WEIGHT).values(), hd, null);
      for (int i = 0; i < rows; i++) {
        System.arraycopy(source, i * hd, out, i * width, hd);
        System.arraycopy(target, i * hd, out, i * width + hd, hd);
      }
    } else {
      float[] value = ModelMath.project(input, rows, in, tensors.get(WEIGHT).values(), hd, null);
      float[] key = headDots(value, rows, rows, tensors.get(SOURCE_ATTENTION).values());
      float[] query = headDots(value, rows, rows, tensors.get(TARGET_ATTENTION).values());
      for (int i = 0; i < rows; i++) {
        System.arraycopy(value, i * hd, out, i * width, hd);
        System.arraycopy(key, i * heads, out, i * width + hd, heads);
        System.arraycopy(query, i * heads, out, i * width + hd + heads, heads);
      }
    }
    return out;
  }

  /**
   * {@link #forward} from kept projections: local row r reads row {@code rows[r]} of {@code table}
   * (every node's {@link #project} output, row-major), for {@code pass.rowsIn} rows; {@code
   * targetInput} holds the first {@code pass.rowsOut} input rows (for the residual). Same
   * arithmetic as {@link #forward}.
   */
  float[] forwardProjected(float[] table, int[] rows, float[] targetInput, ForwardPass pass) {
    int n = pass.rowsIn;
    int m = pass.rowsOut;
    int hd = heads * headWidth;
    int width = projectionWidth();
    float[] value = new float[n * hd];
    float[] query;
    float[] key;
    if (gatv2) {
      query = new float[n * hd];
      for (int i = 0; i < n; i++) {
        System.arraycopy(table, rows[i] * width, value, i * hd, hd);
      }
      for (int i = 0; i < m; i++) {
        System.arraycopy(table, rows[i] * width + hd, query, i * hd, hd);
      }
      key = value;
    } else {
      key = new float[n * heads];
      query = new float[n * heads];
      for (int i = 0; i < n; i++) {
        int at = rows[i] * width;
        System.arraycopy(table, at, value, i * hd, hd);
        System.arraycopy(table, at + hd, key, i * heads, heads);
      }
      for (int i = 0; i < m; i++) {
        System.arraycopy(table, rows[i] * width + hd + heads, query, i * heads, heads);
      }
    }
    return attendAndFinish(pass, query, key, value, targetInput);
  }

  /** Attends over the pass's pattern, then {@link #finishAttention}. */
  private float[] attendAndFinish(
      ForwardPass pass, float[] query, float[] key, float[] value, float[] input) {
    HeadShape shape =
        gatv2 ? new HeadShape(heads, headWidth, headWidth) : new HeadShape(heads, 1, headWidth);
    float[] attended = pass.attend(this, pass.pattern, score, shape, query, key, value);
    return finishAttention(input, attended, pass.rowsOut);
  }

  @Override
  float[] finishAttention(float[] input, float[] attended, int m) {
    int in = inputWidth();
    int hd = heads * headWidth;
    float[] out;
    if (concat) {
      out = attended.length == m * hd ? attended : Arrays.copyOf(attended, m * hd);
    } else {
      out = new float[m * headWidth];
      float inv = 1f / heads;
      for (int i = 0; i < m; i++) {
        for (int h = 0; h < heads; h++) {
          int base = (i * heads + h) * headWidth;
          for (int k = 0; k < headWidth; k++) {
            out[i * headWidth + k] += attended[base + k];
          }
        }
        for (int k = 0; k < headWidth; k++) {
          out[i * headWidth + k] *= inv;
        }
      }
    }
    Tensor bias = tensors.get(BIAS);
    if (bias != null) {
      ModelMath.addRowBias(out, outputWidth(), bias.values());
    }
    if (residual.equals("identity")) {
      ModelMath.addInPlace(out, input);
    } else if (residual.equals("linear")) {
      ModelMath.addInPlace(
          out,
          ModelMath.project(
              input, m, in, tensors.get(RESIDUAL_WEIGHT).values(), outputWidth(), null));
    }
    activation.applyInPlace(out);
    return out;
  }

  /**
   * Per node and head, the dot product of that head's projected features with a_target[h] or
   * a_source[h], for the first {@code rows} of the {@code n} nodes (the rest stay zero).
   */
  private float[] headDots(float[] projected, int rows, int n, float[] a) {
    float[] out = new float[n * heads];
    for (int i = 0; i < rows; i++) {
      for (int h = 0; h < heads; h++) {
        int base = (i * heads + h) * headWidth;
        float s = 0f;
        for (int k = 0; k < headWidth; k++) {
          s += a[h * headWidth + k] * projected[base + k];
        }
        out[i * heads + h] = s;
      }
    }
    return out;
  }

  @Override
  Map<String, Tensor> tensors() {
    return tensors;
  }

  @Override
  void writeHyperParameters(ObjectNode json) {
    json.put("score", scoreName());
    json.put("heads", heads);
    json.put("head_width", headWidth);
    json.put("combine_heads", concat ? "concat" : "mean");
    json.put("leaky_relu_slope", leakyReluSlope);
    json.put("activation", activation.fileName());
    json.put("bias", tensors.containsKey(BIAS));
    json.put("residual", residual);
  }
}
