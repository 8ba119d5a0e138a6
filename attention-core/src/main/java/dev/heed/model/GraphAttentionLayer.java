package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;

/**
 * Multi-head graph attention over the call's graph, with GAT or GATv2 scores. For each head h
 * (width d), with projected features {@code z_j = W h_j}:
 *
 * <ul>
 *   <li>GAT (Veličković et al. 2018, eqs. 1–4): {@code e_ij = LeakyReLU(a_tᵀ z_i + a_sᵀ z_j)}, the
 *       split form of {@code aᵀ[z_i ‖ z_j]}; values {@code z_j}. Tensors {@code weight} [in, H·d],
 *       {@code attention_target} [H, d] (a_t, the first half of a), {@code attention_source} [H, d]
 *       (a_s, the second half).
 *   <li>GATv2 (Brody et al. 2022): {@code e_ij = aᵀ LeakyReLU(W_t h_i + W_s h_j)}; values {@code
 *       W_s h_j}. Tensors {@code target_weight} [in, H·d], {@code source_weight} [in, H·d], {@code
 *       attention} [H, d].
 * </ul>
 *
 * <p>Then {@code α_ij} = softmax over the sources j of target i, head outputs {@code Σ_j α_ij v_j},
 * heads concatenated (eq. 5, output width H·d) or averaged (eq. 6, width d), plus {@code bias} if
 * present, plus the residual if any ({@code identity}: the input, needs in = out; {@code linear}:
 * {@code input · residual_weight}), and finally the activation. The layer adds no self-loops: the
 * paper's N(i) includes i, so build the graph with self-loops (a graph builder policy) to match it.
 * A node with no sources gets zeros from attention (then bias, residual and activation).
 *
 * <p>Cost per call: O(n·in·H·d) for the projections plus the kernel's O(E·H·d) (sparse) or
 * O(n²·H·d) (dense).
 *
 * <p>Thread safety: immutable.
 */
public final class GraphAttentionLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "graph_attention";

  /** LeakyReLU slope when a file gives none: 0.2, as in Veličković et al. 2018, §2.1. */
  public static final double DEFAULT_NEGATIVE_SLOPE = 0.2;

  private final boolean gatv2;
  private final int heads;
  private final int headWidth;
  private final boolean concat;
  private final double negativeSlope;
  private final Activation activation;
  private final String residual;
  private final Map<String, Tensor> tensors;
  private final ScoreFunction score;

  private GraphAttentionLayer(
      String name,
      int inputWidth,
      boolean gatv2,
      int heads,
      int headWidth,
      boolean concat,
      double negativeSlope,
      Activation activation,
      String residual,
      Map<String, Tensor> tensors) {
    super(name, inputWidth, concat ? heads * headWidth : headWidth);
    this.gatv2 = gatv2;
    this.heads = heads;
    this.headWidth = headWidth;
    this.concat = concat;
    this.negativeSlope = negativeSlope;
    this.activation = activation;
    this.residual = residual;
    this.tensors = tensors;
    if (gatv2) {
      this.score = ScoreFunction.gatv2((float) negativeSlope, tensors.get("attention").values());
    } else {
      this.score = ScoreFunction.additive((float) negativeSlope);
    }
  }

  static GraphAttentionLayer read(LayerReader r) throws ModelFormatException {
    boolean v2 = r.string("score", List.of("gat", "gatv2")).equals("gatv2");
    int heads = r.integer("heads", 1);
    int d = r.integer("head_width", 1);
    if ((long) heads * d > 1 << 20) {
      throw r.error("heads * head_width = " + ((long) heads * d) + " is too large");
    }
    boolean concat = r.string("combine_heads", List.of("concat", "mean")).equals("concat");
    double slope = r.number("negative_slope", DEFAULT_NEGATIVE_SLOPE, 0, 1);
    Activation act = r.activation("activation", Activation.IDENTITY);
    boolean bias = r.bool("bias", false);
    String residual = r.string("residual", "none", List.of("none", "identity", "linear"));
    int in = r.inputWidth;
    int hd = heads * d;
    int out = concat ? hd : d;
    String proj = "input width " + in + " by heads * head_width = " + heads + " * " + d;
    String att = "heads by head_width";
    Map<String, Tensor> t = new LinkedHashMap<>();
    if (v2) {
      t.put("target_weight", r.tensor("target_weight", proj, in, hd));
      t.put("source_weight", r.tensor("source_weight", proj, in, hd));
      t.put("attention", r.tensor("attention", att, heads, d));
    } else {
      t.put("weight", r.tensor("weight", proj, in, hd));
      t.put("attention_target", r.tensor("attention_target", att, heads, d));
      t.put("attention_source", r.tensor("attention_source", att, heads, d));
    }
    if (bias) {
      t.put("bias", r.tensor("bias", "the output width " + out, out));
    }
    if (residual.equals("identity") && in != out) {
      throw r.error(
          "residual 'identity' needs input width = output width, got "
              + in
              + " and "
              + out
              + "; use residual 'linear' with a residual_weight tensor");
    }
    if (residual.equals("linear")) {
      t.put("residual_weight", r.tensor("residual_weight", "input width by output width", in, out));
    }
    r.finish();
    return new GraphAttentionLayer(r.name, in, v2, heads, d, concat, slope, act, residual, t);
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
    int n = pass.rowsIn;
    int m = pass.rowsOut;
    int in = inputWidth();
    int hd = heads * headWidth;
    float[] query;
    float[] key;
    float[] value;
    HeadShape shape;
    if (gatv2) {
      query =
          ModelMath.padTo(
              ModelMath.project(input, m, in, tensors.get("target_weight").values(), hd, null),
              n * hd);
      value = ModelMath.project(input, n, in, tensors.get("source_weight").values(), hd, null);
      key = value;
      shape = new HeadShape(heads, headWidth, headWidth);
    } else {
      value = ModelMath.project(input, n, in, tensors.get("weight").values(), hd, null);
      query = headDots(value, m, n, tensors.get("attention_target").values());
      key = headDots(value, n, n, tensors.get("attention_source").values());
      shape = new HeadShape(heads, 1, headWidth);
    }
    float[] attended = pass.attend(this, pass.pattern, score, shape, query, key, value);
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
    Tensor bias = tensors.get("bias");
    if (bias != null) {
      ModelMath.addRowBias(out, outputWidth(), bias.values());
    }
    if (residual.equals("identity")) {
      ModelMath.addInPlace(out, input);
    } else if (residual.equals("linear")) {
      ModelMath.addInPlace(
          out,
          ModelMath.project(
              input, m, in, tensors.get("residual_weight").values(), outputWidth(), null));
    }
    activation.applyInPlace(out);
    return out;
  }

  /**
   * Per node and head, the dot product of that head's projected features with a[h], for the first
   * {@code rows} of the {@code n} nodes (the rest stay zero).
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
    json.put("negative_slope", negativeSlope);
    json.put("activation", activation.fileName());
    json.put("bias", tensors.containsKey("bias"));
    json.put("residual", residual);
  }
}
