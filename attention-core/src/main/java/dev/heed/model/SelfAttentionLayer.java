package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;

/**
 * A multi-head scaled dot-product attention block (Vaswani et al. 2017, eq. 1 and §3.2.2) over
 * either every pair of nodes ({@code pattern: "complete"}, full self-attention) or the call's graph
 * ({@code pattern: "graph"}, graph-masked), with the usual encoder-block options. With model width
 * m = the input width, H heads, key width d_k and value width d_v:
 *
 * <pre>
 *   a  = norm == pre ? LayerNorm₁(x) : x
 *   Q = a·W_Q (+b_Q), K = a·W_K (+b_K), V = a·W_V (+b_V)        [n, H·d_k], [n, H·d_k], [n, H·d_v]
 *   head_h = softmax(Q_h K_hᵀ / √d_k, over allowed pairs) V_h
 *   y  = Concat(head_1..head_H) · W_O (+b_O)                       [n, m]
 *   y  = residual ? x + y : y;      y = norm == post ? LayerNorm₁(y) : y
 *   if feed_forward_width f > 0 (Vaswani et al. 2017, eq. 2, with the chosen activation):
 *     b  = norm == pre ? LayerNorm₂(y) : y
 *     z  = act(b·W_1 (+b_1))·W_2 (+b_2)
 *     z  = residual ? y + z : z;    y = norm == post ? LayerNorm₂(z) : z
 * </pre>
 *
 * <p>{@code post} is the original arrangement of Vaswani et al.; {@code pre} normalises each
 * sublayer's input instead (common practice). Layer normalisation follows Ba et al. 2016 with a
 * per-feature scale and shift and the file's epsilon. Output width = m. Layers come from model
 * files or from {@link #builder}:
 *
 * <pre>{@code
 * SelfAttentionLayer block =
 *     SelfAttentionLayer.builder("block", 16, 2, 8, 8)   // m = 16, 2 heads, d_k = d_v = 8
 *         .attendToAllNodes(true)
 *         .queryWeight(wq).keyWeight(wk).valueWeight(wv)   // [16, 16] each
 *         .outputWeight(wo)                                 // [16, 16]
 *         .residual(true)
 *         .build();
 * }</pre>
 *
 * <p>Cost per call: O(n·m·H·(2d_k + d_v) + n·H·d_v·m + 2n·m·f) for the products plus the kernel's
 * O(E·H·(d_k + d_v)) (sparse) or O(n²·H·(d_k + d_v)) (dense; E = n² for the complete pattern).
 *
 * <p>Thread safety: immutable.
 */
public final class SelfAttentionLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "self_attention";

  /** Layer-normalisation epsilon when none is given: 1e-5 (common practice). */
  public static final double DEFAULT_NORM_EPSILON = 1e-5;

  /**
   * Where a block normalises (Ba et al. 2016), as the model file's {@code normalization} key says.
   *
   * <p>Thread safety: an enum, immutable.
   */
  public enum Normalization {
    /** No layer normalisation. */
    NONE("none"),
    /** Normalise each sublayer's input (common practice). */
    PRE("pre"),
    /** Normalise after each residual sum (Vaswani et al. 2017). */
    POST("post");

    private final String fileName;

    Normalization(String fileName) {
      this.fileName = fileName;
    }

    /**
     * Returns the name used in model files.
     *
     * @return {@code "none"}, {@code "pre"} or {@code "post"}
     */
    public String fileName() {
      return fileName;
    }
  }

  private static final String QUERY_WEIGHT = "query_weight";
  private static final String KEY_WEIGHT = "key_weight";
  private static final String VALUE_WEIGHT = "value_weight";
  private static final String OUTPUT_WEIGHT = "output_weight";
  private static final String QUERY_BIAS = "query_bias";
  private static final String KEY_BIAS = "key_bias";
  private static final String VALUE_BIAS = "value_bias";
  private static final String OUTPUT_BIAS = "output_bias";
  private static final String FEED_FORWARD_WEIGHT1 = "feed_forward_weight1";
  private static final String FEED_FORWARD_WEIGHT2 = "feed_forward_weight2";
  private static final String FEED_FORWARD_BIAS1 = "feed_forward_bias1";
  private static final String FEED_FORWARD_BIAS2 = "feed_forward_bias2";
  private static final String ATTENTION_NORM = "attention";
  private static final String FEED_FORWARD_NORM = "feed_forward";
  private static final String SCALE = "_norm_scale";
  private static final String SHIFT = "_norm_shift";

  private final boolean complete;
  private final int heads;
  private final int keyWidth;
  private final int valueWidth;
  private final boolean bias;
  private final boolean residual;
  private final Normalization normalization;
  private final double epsilon;
  private final int feedForwardWidth;
  private final Activation feedForwardActivation;
  private final Map<String, Tensor> tensors;

  private SelfAttentionLayer(Builder b, Map<String, Tensor> tensors) {
    super(b.parts.name, b.width, b.width);
    this.complete = b.complete;
    this.heads = b.heads;
    this.keyWidth = b.keyWidth;
    this.valueWidth = b.valueWidth;
    this.bias = b.bias;
    this.residual = b.residual;
    this.normalization = b.normalization;
    this.epsilon = b.epsilon;
    this.feedForwardWidth = b.feedForwardWidth;
    this.feedForwardActivation = b.feedForwardActivation;
    this.tensors = tensors;
  }

  /**
   * Starts a self-attention block. Supply the four projections ({@link Builder#queryWeight}, {@link
   * Builder#keyWeight}, {@link Builder#valueWeight}, {@link Builder#outputWeight}). Defaults:
   * attention along the call's graph, no biases, residual on, no normalisation, no feed-forward
   * sublayer.
   *
   * @param name the layer's name, unique within its model, not empty
   * @param modelWidth m, the input and output width, at least 1
   * @param heads number of heads H, at least 1
   * @param keyWidth d_k, per-head query and key width, at least 1
   * @param valueWidth d_v, per-head value width, at least 1
   * @return the builder
   */
  public static Builder builder(
      String name, int modelWidth, int heads, int keyWidth, int valueWidth) {
    return new Builder(name, modelWidth, heads, keyWidth, valueWidth);
  }

  static SelfAttentionLayer read(LayerReader r) throws ModelFormatException {
    boolean complete = r.string("pattern", List.of("complete", "graph")).equals("complete");
    Builder b =
        new Builder(
            r.name,
            r.inputWidth,
            r.integer("heads", 1),
            r.integer("key_width", 1),
            r.integer("value_width", 1));
    b.complete = complete;
    b.bias = r.bool("bias", true);
    b.residual = r.bool("residual", true);
    String norm = r.string("normalization", "none", List.of("none", "pre", "post"));
    b.normalization = Normalization.valueOf(norm.toUpperCase(Locale.ROOT));
    b.epsilon = r.number("norm_epsilon", DEFAULT_NORM_EPSILON, Double.MIN_VALUE, 1);
    b.feedForwardWidth = r.integer("feed_forward_width", 0, 0);
    b.feedForwardActivation = r.activation("feed_forward_activation", Activation.RELU);
    return r.build(b.parts, b::build);
  }

  /**
   * Builder for {@link SelfAttentionLayer}; start with {@link SelfAttentionLayer#builder}. Tensors
   * are row-major float arrays, copied when supplied; heads are laid out head-major in the columns
   * (head h in columns h·d … h·d+d−1). Biases come on every projection or on none: supplying any
   * bias asks for all of them ({@code query_bias}, {@code key_bias}, {@code value_bias}, {@code
   * output_bias}, and with a feed-forward sublayer {@code feed_forward_bias1} and {@code
   * feed_forward_bias2}).
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final LayerParts parts;
    private final int width;
    private final int heads;
    private final int keyWidth;
    private final int valueWidth;
    private boolean complete;
    private boolean bias;
    private boolean residual = true;
    private Normalization normalization = Normalization.NONE;
    private double epsilon = DEFAULT_NORM_EPSILON;
    private int feedForwardWidth;
    private Activation feedForwardActivation = Activation.RELU;

    private Builder(String name, int width, int heads, int keyWidth, int valueWidth) {
      this.parts = new LayerParts(KIND, name);
      this.width = width;
      this.heads = heads;
      this.keyWidth = keyWidth;
      this.valueWidth = valueWidth;
    }

    /**
     * Sets the pattern the block attends over.
     *
     * @param all true: every pair of nodes (full self-attention, the graph's edges ignored); false:
     *     the call's graph (graph-masked, the default)
     * @return this builder
     */
    public Builder attendToAllNodes(boolean all) {
      this.complete = all;
      return this;
    }

    /**
     * Sets whether each sublayer's input is added to its output (default true).
     *
     * @param enabled whether to add the residual
     * @return this builder
     */
    public Builder residual(boolean enabled) {
      this.residual = enabled;
      return this;
    }

    /**
     * Sets W_Q.
     *
     * @param values input, copied: [m, H·d_k]
     * @return this builder
     */
    public Builder queryWeight(float[] values) {
      parts.put(QUERY_WEIGHT, values);
      return this;
    }

    /**
     * Sets W_K.
     *
     * @param values input, copied: [m, H·d_k]
     * @return this builder
     */
    public Builder keyWeight(float[] values) {
      parts.put(KEY_WEIGHT, values);
      return this;
    }

    /**
     * Sets W_V.
     *
     * @param values input, copied: [m, H·d_v]
     * @return this builder
     */
    public Builder valueWeight(float[] values) {
      parts.put(VALUE_WEIGHT, values);
      return this;
    }

    /**
     * Sets W_O, applied to the concatenated heads.
     *
     * @param values input, copied: [H·d_v, m]
     * @return this builder
     */
    public Builder outputWeight(float[] values) {
      parts.put(OUTPUT_WEIGHT, values);
      return this;
    }

    /**
     * Sets b_Q (see the class comment: biases come on every projection or on none).
     *
     * @param values input, copied: [H·d_k]
     * @return this builder
     */
    public Builder queryBias(float[] values) {
      return putBias(QUERY_BIAS, values);
    }

    /**
     * Sets b_K.
     *
     * @param values input, copied: [H·d_k]
     * @return this builder
     */
    public Builder keyBias(float[] values) {
      return putBias(KEY_BIAS, values);
    }

    /**
     * Sets b_V.
     *
     * @param values input, copied: [H·d_v]
     * @return this builder
     */
    public Builder valueBias(float[] values) {
      return putBias(VALUE_BIAS, values);
    }

    /**
     * Sets b_O.
     *
     * @param values input, copied: [m]
     * @return this builder
     */
    public Builder outputBias(float[] values) {
      return putBias(OUTPUT_BIAS, values);
    }

    /**
     * Sets where the block normalises; with {@code PRE} or {@code POST} supply the attention
     * sublayer's scale and shift, and the feed-forward sublayer's if it has one.
     *
     * @param mode the normalisation
     * @param epsilon added to the variance, in (0, 1); {@value
     *     SelfAttentionLayer#DEFAULT_NORM_EPSILON} is common
     * @return this builder
     */
    public Builder normalization(Normalization mode, double epsilon) {
      this.normalization = Objects.requireNonNull(mode, "mode");
      this.epsilon = epsilon;
      return this;
    }

    /**
     * Sets the attention sublayer's layer-normalisation scale and shift.
     *
     * @param scale input, copied: [m]
     * @param shift input, copied: [m]
     * @return this builder
     */
    public Builder attentionNorm(float[] scale, float[] shift) {
      parts.put(ATTENTION_NORM + SCALE, scale);
      parts.put(ATTENTION_NORM + SHIFT, shift);
      return this;
    }

    /**
     * Adds the position-wise feed-forward sublayer {@code act(b·W_1 + b_1)·W_2 + b_2} (Vaswani et
     * al. 2017, eq. 2).
     *
     * @param hiddenWidth f, at least 1
     * @param act the activation between the two products
     * @param weight1 input, copied: W_1, [m, f]
     * @param weight2 input, copied: W_2, [f, m]
     * @return this builder
     */
    public Builder feedForward(int hiddenWidth, Activation act, float[] weight1, float[] weight2) {
      this.feedForwardWidth = hiddenWidth;
      this.feedForwardActivation = Objects.requireNonNull(act, "activation");
      parts.put(FEED_FORWARD_WEIGHT1, weight1);
      parts.put(FEED_FORWARD_WEIGHT2, weight2);
      return this;
    }

    /**
     * Sets the feed-forward sublayer's biases.
     *
     * @param bias1 input, copied: b_1, [f]
     * @param bias2 input, copied: b_2, [m]
     * @return this builder
     */
    public Builder feedForwardBiases(float[] bias1, float[] bias2) {
      putBias(FEED_FORWARD_BIAS1, bias1);
      return putBias(FEED_FORWARD_BIAS2, bias2);
    }

    /**
     * Sets the feed-forward sublayer's layer-normalisation scale and shift.
     *
     * @param scale input, copied: [m]
     * @param shift input, copied: [m]
     * @return this builder
     */
    public Builder feedForwardNorm(float[] scale, float[] shift) {
      parts.put(FEED_FORWARD_NORM + SCALE, scale);
      parts.put(FEED_FORWARD_NORM + SHIFT, shift);
      return this;
    }

    private Builder putBias(String role, float[] values) {
      parts.put(role, values);
      this.bias = true;
      return this;
    }

    /**
     * Checks the settings and tensors and builds the layer.
     *
     * @return the layer
     * @throws IllegalArgumentException if a setting is out of range, or a tensor is missing, of the
     *     wrong length, not finite or not used with these settings (the message names the layer and
     *     tensor)
     */
    public SelfAttentionLayer build() {
      int m = width;
      parts.checkPositive("model width", m);
      parts.checkPositive("heads", heads);
      parts.checkPositive("key_width", keyWidth);
      parts.checkPositive("value_width", valueWidth);
      parts.checkNotTooLarge("heads * key_width", (long) heads * keyWidth);
      parts.checkNotTooLarge("heads * value_width", (long) heads * valueWidth);
      parts.checkRange("norm_epsilon", epsilon, Double.MIN_VALUE, 1);
      if (feedForwardWidth < 0) {
        throw parts.error("feed_forward_width must be at least 0, got " + feedForwardWidth);
      }
      int hk = heads * keyWidth;
      int hv = heads * valueWidth;
      int ff = feedForwardWidth;
      String mk = "model width " + m + " by heads * key_width = " + heads + " * " + keyWidth;
      String mv = "model width " + m + " by heads * value_width = " + heads + " * " + valueWidth;
      parts.take(QUERY_WEIGHT, mk, m, hk);
      parts.take(KEY_WEIGHT, mk, m, hk);
      parts.take(VALUE_WEIGHT, mv, m, hv);
      parts.take(OUTPUT_WEIGHT, "heads * value_width = " + hv + " by model width " + m, hv, m);
      if (bias) {
        parts.take(QUERY_BIAS, "heads * key_width", hk);
        parts.take(KEY_BIAS, "heads * key_width", hk);
        parts.take(VALUE_BIAS, "heads * value_width", hv);
        parts.take(OUTPUT_BIAS, "model width", m);
      }
      boolean normed = normalization != Normalization.NONE;
      if (normed) {
        takeNorm(ATTENTION_NORM, m);
      }
      if (ff > 0) {
        parts.take(
            FEED_FORWARD_WEIGHT1, "model width " + m + " by feed_forward_width " + ff, m, ff);
        if (bias) {
          parts.take(FEED_FORWARD_BIAS1, "feed_forward_width", ff);
        }
        parts.take(
            FEED_FORWARD_WEIGHT2, "feed_forward_width " + ff + " by model width " + m, ff, m);
        if (bias) {
          parts.take(FEED_FORWARD_BIAS2, "model width", m);
        }
        if (normed) {
          takeNorm(FEED_FORWARD_NORM, m);
        }
      }
      return new SelfAttentionLayer(this, parts.finish());
    }

    private void takeNorm(String sublayer, int m) {
      parts.take(sublayer + SCALE, "model width", m);
      parts.take(sublayer + SHIFT, "model width", m);
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

  /**
   * Returns whether the layer attends over every pair of nodes rather than the call's graph.
   *
   * @return true for full self-attention
   */
  public boolean attendsToAllNodes() {
    return complete;
  }

  @Override
  int widestRow() {
    return Math.max(
        Math.max(super.widestRow(), feedForwardWidth),
        Math.max(heads * keyWidth, heads * valueWidth));
  }

  @Override
  Reach reach() {
    return complete ? Reach.EVERY_NODE : Reach.IN_NEIGHBOURS;
  }

  @Override
  float[] forward(float[] x, ForwardPass pass) {
    int n = pass.rowsIn;
    AttentionInputs in = prepareAttention(x, n, pass.rowsOut);
    AttentionPattern pattern = complete ? CompletePattern.of(n) : pass.pattern;
    float[] attended =
        pass.attend(this, pattern, in.score(), in.shape(), in.query(), in.key(), in.value());
    return finishAttention(x, attended, pass.rowsOut);
  }

  @Override
  AttentionInputs prepareAttention(float[] x, int n, int rows) {
    int m = inputWidth();
    float[] a = normalization == Normalization.PRE ? norm(x, ATTENTION_NORM) : x;
    float[] q =
        ModelMath.padTo(
            ModelMath.project(
                a, rows, m, values(QUERY_WEIGHT), heads * keyWidth, values(QUERY_BIAS)),
            n * heads * keyWidth);
    float[] k = ModelMath.project(a, n, m, values(KEY_WEIGHT), heads * keyWidth, values(KEY_BIAS));
    float[] v =
        ModelMath.project(a, n, m, values(VALUE_WEIGHT), heads * valueWidth, values(VALUE_BIAS));
    return new AttentionInputs(
        ScoreFunction.scaledDotProduct(), new HeadShape(heads, keyWidth, valueWidth), q, k, v);
  }

  @Override
  float[] finishAttention(float[] x, float[] attended, int rows) {
    int m = inputWidth();
    boolean pre = normalization == Normalization.PRE;
    boolean post = normalization == Normalization.POST;
    float[] y =
        ModelMath.project(
            attended, rows, heads * valueWidth, values(OUTPUT_WEIGHT), m, values(OUTPUT_BIAS));
    if (residual) {
      ModelMath.addInPlace(y, x);
    }
    if (post) {
      y = norm(y, ATTENTION_NORM);
    }
    if (feedForwardWidth > 0) {
      float[] b = pre ? norm(y, FEED_FORWARD_NORM) : y;
      float[] hidden =
          ModelMath.project(
              b,
              rows,
              m,
              values(FEED_FORWARD_WEIGHT1),
              feedForwardWidth,
              values(FEED_FORWARD_BIAS1));
      feedForwardActivation.applyInPlace(hidden);
      float[] z =
          ModelMath.project(
              hidden,
              rows,
              feedForwardWidth,
              values(FEED_FORWARD_WEIGHT2),
              m,
              values(FEED_FORWARD_BIAS2));
      if (residual) {
        ModelMath.addInPlace(z, y);
      }
      y = post ? norm(z, FEED_FORWARD_NORM) : z;
    }
    return y;
  }

  private float[] norm(float[] x, String which) {
    return ModelMath.layerNorm(
        x, inputWidth(), values(which + SCALE), values(which + SHIFT), epsilon);
  }

  private float[] values(String role) {
    Tensor t = tensors.get(role);
    return t == null ? null : t.values();
  }

  @Override
  Map<String, Tensor> tensors() {
    return tensors;
  }

  @Override
  void writeHyperParameters(ObjectNode json) {
    json.put("pattern", complete ? "complete" : "graph");
    json.put("heads", heads);
    json.put("key_width", keyWidth);
    json.put("value_width", valueWidth);
    json.put("bias", bias);
    json.put("residual", residual);
    json.put("normalization", normalization.fileName());
    json.put("norm_epsilon", epsilon);
    json.put("feed_forward_width", feedForwardWidth);
    json.put("feed_forward_activation", feedForwardActivation.fileName());
  }
}
