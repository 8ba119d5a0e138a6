package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

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
 * per-feature scale and shift and the file's epsilon. Output width = m.
 *
 * <p>Cost per call: O(n·m·H·(2d_k + d_v) + n·H·d_v·m + 2n·m·f) for the products plus the kernel's
 * O(E·H·(d_k + d_v)) (sparse) or O(n²·H·(d_k + d_v)) (dense; E = n² for the complete pattern).
 *
 * <p>Thread safety: immutable.
 */
public final class SelfAttentionLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "self_attention";

  /** Layer-normalisation epsilon when a file gives none: 1e-5 (common practice). */
  public static final double DEFAULT_NORM_EPSILON = 1e-5;

  private final boolean complete;
  private final int heads;
  private final int keyWidth;
  private final int valueWidth;
  private final boolean bias;
  private final boolean residual;
  private final String normalization;
  private final double epsilon;
  private final int feedForwardWidth;
  private final Activation feedForwardActivation;
  private final Map<String, Tensor> tensors;

  private SelfAttentionLayer(
      String name,
      int width,
      boolean complete,
      int heads,
      int keyWidth,
      int valueWidth,
      boolean bias,
      boolean residual,
      String normalization,
      double epsilon,
      int feedForwardWidth,
      Activation feedForwardActivation,
      Map<String, Tensor> tensors) {
    super(name, width, width);
    this.complete = complete;
    this.heads = heads;
    this.keyWidth = keyWidth;
    this.valueWidth = valueWidth;
    this.bias = bias;
    this.residual = residual;
    this.normalization = normalization;
    this.epsilon = epsilon;
    this.feedForwardWidth = feedForwardWidth;
    this.feedForwardActivation = feedForwardActivation;
    this.tensors = tensors;
  }

  static SelfAttentionLayer read(LayerReader r) throws ModelFormatException {
    boolean complete = r.string("pattern", List.of("complete", "graph")).equals("complete");
    int heads = r.integer("heads", 1);
    int dk = r.integer("key_width", 1);
    int dv = r.integer("value_width", 1);
    boolean bias = r.bool("bias", true);
    boolean residual = r.bool("residual", true);
    String norm = r.string("normalization", "none", List.of("none", "pre", "post"));
    double eps = r.number("norm_epsilon", DEFAULT_NORM_EPSILON, Double.MIN_VALUE, 1);
    int ff = r.integer("feed_forward_width", 0, 0);
    Activation ffAct = r.activation("feed_forward_activation", Activation.RELU);
    int m = r.inputWidth;
    if ((long) heads * Math.max(dk, dv) > 1 << 20) {
      throw r.error("heads * key_width or heads * value_width is too large");
    }
    int hk = heads * dk;
    int hv = heads * dv;
    String mk = "model width " + m + " by heads * key_width = " + heads + " * " + dk;
    String mv = "model width " + m + " by heads * value_width = " + heads + " * " + dv;
    Map<String, Tensor> t = new LinkedHashMap<>();
    t.put("query_weight", r.tensor("query_weight", mk, m, hk));
    t.put("key_weight", r.tensor("key_weight", mk, m, hk));
    t.put("value_weight", r.tensor("value_weight", mv, m, hv));
    t.put(
        "output_weight",
        r.tensor("output_weight", "heads * value_width = " + hv + " by model width " + m, hv, m));
    if (bias) {
      t.put("query_bias", r.tensor("query_bias", "heads * key_width", hk));
      t.put("key_bias", r.tensor("key_bias", "heads * key_width", hk));
      t.put("value_bias", r.tensor("value_bias", "heads * value_width", hv));
      t.put("output_bias", r.tensor("output_bias", "model width", m));
    }
    boolean normed = !norm.equals("none");
    if (normed) {
      t.put("attention_norm_scale", r.tensor("attention_norm_scale", "model width", m));
      t.put("attention_norm_shift", r.tensor("attention_norm_shift", "model width", m));
    }
    if (ff > 0) {
      String mf = "model width " + m + " by feed_forward_width " + ff;
      t.put("feed_forward_weight1", r.tensor("feed_forward_weight1", mf, m, ff));
      if (bias) {
        t.put("feed_forward_bias1", r.tensor("feed_forward_bias1", "feed_forward_width", ff));
      }
      t.put(
          "feed_forward_weight2",
          r.tensor(
              "feed_forward_weight2", "feed_forward_width " + ff + " by model width " + m, ff, m));
      if (bias) {
        t.put("feed_forward_bias2", r.tensor("feed_forward_bias2", "model width", m));
      }
      if (normed) {
        t.put("feed_forward_norm_scale", r.tensor("feed_forward_norm_scale", "model width", m));
        t.put("feed_forward_norm_shift", r.tensor("feed_forward_norm_shift", "model width", m));
      }
    }
    r.finish();
    return new SelfAttentionLayer(
        r.name, m, complete, heads, dk, dv, bias, residual, norm, eps, ff, ffAct, t);
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
    int rows = pass.rowsOut;
    int m = inputWidth();
    boolean pre = normalization.equals("pre");
    boolean post = normalization.equals("post");
    float[] a = pre ? norm(x, "attention") : x;
    float[] q =
        ModelMath.padTo(
            ModelMath.project(
                a, rows, m, values("query_weight"), heads * keyWidth, values("query_bias")),
            n * heads * keyWidth);
    float[] k =
        ModelMath.project(a, n, m, values("key_weight"), heads * keyWidth, values("key_bias"));
    float[] v =
        ModelMath.project(
            a, n, m, values("value_weight"), heads * valueWidth, values("value_bias"));
    AttentionPattern pattern = complete ? CompletePattern.of(n) : pass.pattern;
    float[] attended =
        pass.attend(
            this,
            pattern,
            ScoreFunction.scaledDotProduct(),
            new HeadShape(heads, keyWidth, valueWidth),
            q,
            k,
            v);
    float[] y =
        ModelMath.project(
            attended, rows, heads * valueWidth, values("output_weight"), m, values("output_bias"));
    if (residual) {
      ModelMath.addInPlace(y, x);
    }
    if (post) {
      y = norm(y, "attention");
    }
    if (feedForwardWidth > 0) {
      float[] b = pre ? norm(y, "feed_forward") : y;
      float[] hidden =
          ModelMath.project(
              b,
              rows,
              m,
              values("feed_forward_weight1"),
              feedForwardWidth,
              values("feed_forward_bias1"));
      feedForwardActivation.applyInPlace(hidden);
      float[] z =
          ModelMath.project(
              hidden,
              rows,
              feedForwardWidth,
              values("feed_forward_weight2"),
              m,
              values("feed_forward_bias2"));
      if (residual) {
        ModelMath.addInPlace(z, y);
      }
      y = post ? norm(z, "feed_forward") : z;
    }
    return y;
  }

  private float[] norm(float[] x, String which) {
    return ModelMath.layerNorm(
        x, inputWidth(), values(which + "_norm_scale"), values(which + "_norm_shift"), epsilon);
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
    json.put("normalization", normalization);
    json.put("norm_epsilon", epsilon);
    json.put("feed_forward_width", feedForwardWidth);
    json.put("feed_forward_activation", feedForwardActivation.fileName());
  }
}
