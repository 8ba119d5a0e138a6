package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.npy.NpyArray;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Each layer's output against a plain float64 evaluation of the published equations, written out
 * below in test code (not shared with the layers): GAT — Veličković et al. 2018, eqs. 1–6; GATv2 —
 * Brody et al. 2022, the GATv2 scoring function; multi-head scaled dot-product attention — Vaswani
 * et al. 2017, eq. 1 and §3.2.2, feed-forward eq. 2; layer normalisation — Ba et al. 2016; ELU —
 * Clevert et al. 2016. Weights and features are fresh Gaussian values, seeded per test. Tolerance:
 * 1e-5 norm-wise relative error.
 */
class LayerEquationsTest {

  private static final ObjectMapper JSON = new ObjectMapper();
  private static final double TOLERANCE = 1e-5;

  private final Map<String, float[]> weights = new LinkedHashMap<>();
  private final Map<String, NpyArray> arrays = new LinkedHashMap<>();
  private Random random;

  private float[] tensor(ObjectNode layer, String role, int... shape) {
    int size = 1;
    for (int d : shape) {
      size *= d;
    }
    float[] v = new float[size];
    for (int i = 0; i < size; i++) {
      v[i] = (float) (0.5 * random.nextGaussian());
    }
    String name = layer.get("name").asText() + "." + role;
    weights.put(role, v);
    arrays.put(name, NpyArray.ofFloats(v, shape));
    (layer.has("tensors") ? (ObjectNode) layer.get("tensors") : layer.putObject("tensors"))
        .put(role, name);
    return v;
  }

  /** Loads a model of the one layer plus a softmax head and returns the layer. */
  private Layer load(int inputs, ObjectNode layer, int outputs) throws IOException {
    ObjectNode d = JSON.createObjectNode();
    d.put("format", "heed-model").put("format_version", 1).put("input_features", inputs);
    var labels = d.putArray("class_labels");
    for (int c = 0; c < outputs; c++) {
      labels.add("c" + c);
    }
    var layers = d.putArray("layers");
    layers.add(layer);
    layers.addObject().put("kind", "softmax").put("name", "head");
    return TestModels.load(TestModels.modelBytes(JSON.writeValueAsBytes(d), arrays))
        .layers()
        .get(0);
  }

  private static float[] run(Layer layer, AttentionPattern graph, float[] x) {
    ForwardPass pass =
        new ForwardPass(
            graph, PathChoice.SPARSE, p -> new ReferenceAttentionKernel(), null, 1, false);
    return layer.forward(x, pass);
  }

  private float[] features(int n, int f) {
    float[] x = new float[n * f];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    return x;
  }

  /**
   * A random graph: each node attends to itself with probability 3/4 and to others with probability
   * 0.3; the last node attends to nothing (the layer must not invent self-loops).
   */
  private CsrGraph graph(int n) {
    int[] offsets = new int[n + 1];
    List<Integer> cols = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < n && i < n - 1; j++) {
        if (i == j ? random.nextInt(4) > 0 : random.nextDouble() < 0.3) {
          cols.add(j);
        }
      }
      offsets[i + 1] = cols.size();
    }
    return CsrGraph.of(offsets, cols.stream().mapToInt(Integer::intValue).toArray());
  }

  private static List<Integer> sources(AttentionPattern g, int i) {
    List<Integer> s = new ArrayList<>();
    for (int j = 0; j < g.nodeCount(); j++) {
      if (g.allows(i, j)) {
        s.add(j);
      }
    }
    return s;
  }

  // ---- plain float64 helpers ----

  /** x [n, in] · w [in, out]. */
  private static double[] matmul(double[] x, int n, int in, float[] w, int out) {
    double[] y = new double[n * out];
    for (int i = 0; i < n; i++) {
      for (int o = 0; o < out; o++) {
        double s = 0;
        for (int k = 0; k < in; k++) {
          s += x[i * in + k] * (double) w[k * out + o];
        }
        y[i * out + o] = s;
      }
    }
    return y;
  }

  private static double[] toDouble(float[] x) {
    double[] d = new double[x.length];
    for (int i = 0; i < x.length; i++) {
      d[i] = x[i];
    }
    return d;
  }

  private static double leakyRelu(double x, double slope) {
    return x > 0 ? x : slope * x;
  }

  private static double activation(String name, double x) {
    return switch (name) {
      case "elu" -> x > 0 ? x : Math.exp(x) - 1; // Clevert et al. 2016, α = 1
      case "relu" -> Math.max(0, x);
      default -> x;
    };
  }

  /** Softmax over a list of scores (Veličković et al. 2018, eq. 2; Vaswani et al. eq. 1). */
  private static double[] softmax(double[] e) {
    double max = Double.NEGATIVE_INFINITY;
    for (double v : e) {
      max = Math.max(max, v);
    }
    double sum = 0;
    double[] a = new double[e.length];
    for (int t = 0; t < e.length; t++) {
      a[t] = Math.exp(e[t] - max);
      sum += a[t];
    }
    for (int t = 0; t < e.length; t++) {
      a[t] /= sum;
    }
    return a;
  }

  private void check(double[] expected, float[] actual, long seed, String what) {
    double error = ReferenceAttention.relativeError(expected, actual);
    assertTrue(error < TOLERANCE, what + ": relative error " + error + " (seed " + seed + ")");
  }

  // ---- GAT ----

  private ObjectNode gatLayer(
      String score, int heads, int d, String combine, String act, boolean bias, String residual) {
    ObjectNode l = JSON.createObjectNode();
    l.put("kind", "graph_attention").put("name", "g").put("score", score);
    l.put("heads", heads).put("head_width", d).put("combine_heads", combine);
    l.put("leaky_relu_slope", 0.2).put("activation", act).put("bias", bias);
    l.put("residual", residual);
    return l;
  }

  /**
   * GAT (v1 and v2) in float64. v1: e_ij = LeakyReLU(aᵀ[Wh_i ‖ Wh_j]) (eq. 1) with a = [a_target ‖
   * a_source]; v2: e_ij = aᵀ LeakyReLU(W_target h_i + W_source h_j) (Brody et al. 2022). α =
   * softmax over N(i) (eqs. 2–3); head output Σ α_ij v_j (eq. 4); concat (eq. 5) or mean (eq. 6);
   * then bias, residual and σ.
   */
  private double[] gatReference(
      AttentionPattern g,
      double[] x,
      int in,
      int heads,
      int d,
      boolean v2,
      boolean concat,
      String act,
      String residual) {
    int n = g.nodeCount();
    int hd = heads * d;
    double[] zt = matmul(x, n, in, weights.get(v2 ? "target_weight" : "weight"), hd);
    double[] zs = v2 ? matmul(x, n, in, weights.get("source_weight"), hd) : zt;
    int out = concat ? hd : d;
    double[] y = new double[n * out];
    for (int i = 0; i < n; i++) {
      List<Integer> nb = sources(g, i);
      for (int h = 0; h < heads; h++) {
        double[] e = new double[nb.size()];
        for (int t = 0; t < nb.size(); t++) {
          int j = nb.get(t);
          double s = 0;
          for (int k = 0; k < d; k++) {
            if (v2) {
              s +=
                  weights.get("attention")[h * d + k]
                      * leakyRelu(zt[i * hd + h * d + k] + zs[j * hd + h * d + k], 0.2);
            } else {
              s +=
                  weights.get("attention_target")[h * d + k] * zt[i * hd + h * d + k]
                      + weights.get("attention_source")[h * d + k] * zs[j * hd + h * d + k];
            }
          }
          e[t] = v2 ? s : leakyRelu(s, 0.2);
        }
        double[] alpha = softmax(e);
        for (int k = 0; k < d; k++) {
          double o = 0;
          for (int t = 0; t < nb.size(); t++) {
            o += alpha[t] * zs[nb.get(t) * hd + h * d + k];
          }
          if (concat) {
            y[i * out + h * d + k] = o;
          } else {
            y[i * out + k] += o / heads;
          }
        }
      }
    }
    float[] bias = weights.get("bias");
    double[] r =
        residual.equals("linear") ? matmul(x, n, in, weights.get("residual_weight"), out) : null;
    for (int i = 0; i < n; i++) {
      for (int o = 0; o < out; o++) {
        double v = y[i * out + o];
        if (bias != null) {
          v += bias[o];
        }
        if (residual.equals("identity")) {
          v += x[i * in + o];
        } else if (r != null) {
          v += r[i * out + o];
        }
        y[i * out + o] = activation(act, v);
      }
    }
    return y;
  }

  private void gatCase(
      long seed,
      String score,
      int in,
      int heads,
      int d,
      String combine,
      String act,
      boolean bias,
      String residual)
      throws IOException {
    random = new Random(seed);
    weights.clear();
    arrays.clear();
    boolean v2 = score.equals("gatv2");
    boolean concat = combine.equals("concat");
    int hd = heads * d;
    int out = concat ? hd : d;
    ObjectNode l = gatLayer(score, heads, d, combine, act, bias, residual);
    if (v2) {
      tensor(l, "target_weight", in, hd);
      tensor(l, "source_weight", in, hd);
      tensor(l, "attention", heads, d);
    } else {
      tensor(l, "weight", in, hd);
      tensor(l, "attention_target", heads, d);
      tensor(l, "attention_source", heads, d);
    }
    if (bias) {
      tensor(l, "bias", out);
    }
    if (residual.equals("linear")) {
      tensor(l, "residual_weight", in, out);
    }
    Layer layer = load(in, l, out);
    CsrGraph g = graph(11);
    float[] x = features(11, in);
    double[] expected = gatReference(g, toDouble(x), in, heads, d, v2, concat, act, residual);
    check(expected, run(layer, g, x), seed, score + " " + combine + " " + act + " " + residual);
  }

  @Test
  void gatConcatEluBias() throws IOException {
    gatCase(101, "gat", 6, 3, 4, "concat", "elu", true, "none"); // eqs. 1–5
  }

  @Test
  void gatMeanWithLinearResidual() throws IOException {
    gatCase(102, "gat", 5, 4, 3, "mean", "identity", false, "linear"); // eq. 6
  }

  @Test
  void gatIdentityResidualRelu() throws IOException {
    gatCase(103, "gat", 8, 2, 4, "concat", "relu", true, "identity");
  }

  @Test
  void gatv2ConcatAndMean() throws IOException {
    gatCase(104, "gatv2", 6, 3, 4, "concat", "elu", true, "none");
    gatCase(105, "gatv2", 7, 2, 5, "mean", "identity", false, "linear");
  }

  /**
   * Brody et al. 2022, static attention: with GAT (v1) scores every query ranks the keys in the
   * same order, so on the complete graph all rows of α have the same argmax per head.
   */
  @Test
  void gatV1AttentionIsStaticOnTheCompleteGraph() throws IOException {
    long seed = 106;
    random = new Random(seed);
    weights.clear();
    arrays.clear();
    ObjectNode l = gatLayer("gat", 2, 3, "concat", "identity", false, "none");
    tensor(l, "weight", 4, 6);
    tensor(l, "attention_target", 2, 3);
    tensor(l, "attention_source", 2, 3);
    Layer layer = load(4, l, 6);
    int n = 9;
    ForwardPass pass =
        new ForwardPass(
            CompletePattern.of(n),
            PathChoice.SPARSE,
            p -> new ReferenceAttentionKernel(),
            null,
            1,
            true);
    layer.forward(features(n, 4), pass);
    LayerAttention a = pass.attention().get(0);
    for (int h = 0; h < 2; h++) {
      int[] order0 = ranking(a, 0, h, n);
      for (int i = 1; i < n; i++) {
        assertEquals(Arrays.toString(order0), Arrays.toString(ranking(a, i, h, n)), "seed " + seed);
      }
    }
  }

  private static int[] ranking(LayerAttention a, int target, int head, int n) {
    Integer[] idx = new Integer[n];
    for (int t = 0; t < n; t++) {
      idx[t] = t;
    }
    Arrays.sort(idx, (p, q) -> Float.compare(a.weight(target, q, head), a.weight(target, p, head)));
    return Arrays.stream(idx).mapToInt(Integer::intValue).toArray();
  }

  // ---- self-attention ----

  private static double[] layerNorm(double[] x, int m, float[] scale, float[] shift, double eps) {
    double[] y = new double[x.length];
    for (int i = 0; i < x.length / m; i++) {
      double mean = 0;
      for (int k = 0; k < m; k++) {
        mean += x[i * m + k];
      }
      mean /= m;
      double var = 0;
      for (int k = 0; k < m; k++) {
        var += (x[i * m + k] - mean) * (x[i * m + k] - mean);
      }
      var /= m;
      for (int k = 0; k < m; k++) {
        y[i * m + k] = (x[i * m + k] - mean) / Math.sqrt(var + eps) * scale[k] + shift[k];
      }
    }
    return y;
  }

  private double[] affine(double[] x, int n, int in, String w, String b, int out) {
    double[] y = matmul(x, n, in, weights.get(w), out);
    float[] bias = weights.get(b);
    if (bias != null) {
      for (int i = 0; i < n; i++) {
        for (int o = 0; o < out; o++) {
          y[i * out + o] += bias[o];
        }
      }
    }
    return y;
  }

  private static double[] add(double[] a, double[] b) {
    double[] c = new double[a.length];
    for (int i = 0; i < a.length; i++) {
      c[i] = a[i] + b[i];
    }
    return c;
  }

  /** Vaswani et al. 2017: eq. 1 per head, Concat(heads)·W_O (§3.2.2), FFN eq. 2; Ba et al. LN. */
  private double[] selfAttentionReference(
      AttentionPattern g,
      double[] x,
      int m,
      int heads,
      int dk,
      int dv,
      String norm,
      boolean residual,
      int ff,
      String ffAct,
      double eps) {
    int n = g.nodeCount();
    double[] a =
        norm.equals("pre")
            ? layerNorm(
                x, m, weights.get("attention_norm_scale"), weights.get("attention_norm_shift"), eps)
            : x;
    double[] q = affine(a, n, m, "query_weight", "query_bias", heads * dk);
    double[] k = affine(a, n, m, "key_weight", "key_bias", heads * dk);
    double[] v = affine(a, n, m, "value_weight", "value_bias", heads * dv);
    double[] concat = new double[n * heads * dv];
    for (int i = 0; i < n; i++) {
      List<Integer> nb = sources(g, i);
      for (int h = 0; h < heads; h++) {
        double[] e = new double[nb.size()];
        for (int t = 0; t < nb.size(); t++) {
          double s = 0;
          for (int c = 0; c < dk; c++) {
            s += q[i * heads * dk + h * dk + c] * k[nb.get(t) * heads * dk + h * dk + c];
          }
          e[t] = s / Math.sqrt(dk);
        }
        double[] alpha = softmax(e);
        for (int c = 0; c < dv; c++) {
          double o = 0;
          for (int t = 0; t < nb.size(); t++) {
            o += alpha[t] * v[nb.get(t) * heads * dv + h * dv + c];
          }
          concat[i * heads * dv + h * dv + c] = o;
        }
      }
    }
    double[] y = affine(concat, n, heads * dv, "output_weight", "output_bias", m);
    if (residual) {
      y = add(y, x);
    }
    if (norm.equals("post")) {
      y =
          layerNorm(
              y, m, weights.get("attention_norm_scale"), weights.get("attention_norm_shift"), eps);
    }
    if (ff > 0) {
      double[] b =
          norm.equals("pre")
              ? layerNorm(
                  y,
                  m,
                  weights.get("feed_forward_norm_scale"),
                  weights.get("feed_forward_norm_shift"),
                  eps)
              : y;
      double[] hidden = affine(b, n, m, "feed_forward_weight1", "feed_forward_bias1", ff);
      for (int i = 0; i < hidden.length; i++) {
        hidden[i] = activation(ffAct, hidden[i]);
      }
      double[] z = affine(hidden, n, ff, "feed_forward_weight2", "feed_forward_bias2", m);
      if (residual) {
        z = add(z, y);
      }
      y =
          norm.equals("post")
              ? layerNorm(
                  z,
                  m,
                  weights.get("feed_forward_norm_scale"),
                  weights.get("feed_forward_norm_shift"),
                  eps)
              : z;
    }
    return y;
  }

  private Layer selfAttentionLayer(
      long seed,
      String pattern,
      int m,
      int heads,
      int dk,
      int dv,
      boolean bias,
      boolean residual,
      String norm,
      int ff,
      String ffAct)
      throws IOException {
    random = new Random(seed);
    weights.clear();
    arrays.clear();
    ObjectNode l = JSON.createObjectNode();
    l.put("kind", "self_attention").put("name", "s").put("pattern", pattern);
    l.put("heads", heads).put("key_width", dk).put("value_width", dv).put("bias", bias);
    l.put("residual", residual).put("normalization", norm).put("norm_epsilon", 1e-5);
    l.put("feed_forward_width", ff).put("feed_forward_activation", ffAct);
    tensor(l, "query_weight", m, heads * dk);
    tensor(l, "key_weight", m, heads * dk);
    tensor(l, "value_weight", m, heads * dv);
    tensor(l, "output_weight", heads * dv, m);
    if (bias) {
      tensor(l, "query_bias", heads * dk);
      tensor(l, "key_bias", heads * dk);
      tensor(l, "value_bias", heads * dv);
      tensor(l, "output_bias", m);
    }
    if (!norm.equals("none")) {
      tensor(l, "attention_norm_scale", m);
      tensor(l, "attention_norm_shift", m);
    }
    if (ff > 0) {
      tensor(l, "feed_forward_weight1", m, ff);
      if (bias) {
        tensor(l, "feed_forward_bias1", ff);
      }
      tensor(l, "feed_forward_weight2", ff, m);
      if (bias) {
        tensor(l, "feed_forward_bias2", m);
      }
      if (!norm.equals("none")) {
        tensor(l, "feed_forward_norm_scale", m);
        tensor(l, "feed_forward_norm_shift", m);
      }
    }
    return load(m, l, m);
  }

  private void selfAttentionCase(
      long seed,
      String pattern,
      int m,
      int heads,
      int dk,
      int dv,
      boolean bias,
      boolean residual,
      String norm,
      int ff,
      String ffAct)
      throws IOException {
    Layer layer =
        selfAttentionLayer(seed, pattern, m, heads, dk, dv, bias, residual, norm, ff, ffAct);
    CsrGraph g = graph(10);
    float[] x = features(10, m);
    AttentionPattern attended = pattern.equals("complete") ? CompletePattern.of(10) : g;
    double[] expected =
        selfAttentionReference(
            attended, toDouble(x), m, heads, dk, dv, norm, residual, ff, ffAct, 1e-5);
    check(expected, run(layer, g, x), seed, pattern + " " + norm + " ff=" + ff);
  }

  @Test
  void fullSelfAttentionPlainMultiHead() throws IOException {
    selfAttentionCase(201, "complete", 8, 2, 4, 3, true, false, "none", 0, "relu");
  }

  @Test
  void encoderBlockPostNormWithFeedForward() throws IOException {
    selfAttentionCase(202, "complete", 12, 3, 4, 4, true, true, "post", 16, "relu");
  }

  @Test
  void graphMaskedPreNormWithFeedForwardWithoutBias() throws IOException {
    selfAttentionCase(203, "graph", 10, 2, 5, 6, false, true, "pre", 8, "elu");
  }

  /** Common practice: full self-attention is attention over the complete graph. */
  @Test
  void completePatternEqualsACompleteCsrGraph() throws IOException {
    Layer full = selfAttentionLayer(204, "complete", 6, 2, 3, 3, true, true, "post", 0, "relu");
    float[] x = features(7, 6);
    Layer masked = selfAttentionLayer(204, "graph", 6, 2, 3, 3, true, true, "post", 0, "relu");
    int n = 7;
    int[] offsets = new int[n + 1];
    int[] cols = new int[n * n];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = (i + 1) * n;
      for (int j = 0; j < n; j++) {
        cols[i * n + j] = j;
      }
    }
    CsrGraph complete = CsrGraph.of(offsets, cols);
    float[] a = run(full, graph(n), x);
    float[] b = run(masked, complete, x);
    check(toDouble(a), b, 204, "complete pattern vs complete CSR graph");
  }

  // ---- dense and softmax ----

  @Test
  void denseLayerAndSoftmaxHead() throws IOException {
    long seed = 301;
    random = new Random(seed);
    weights.clear();
    arrays.clear();
    ObjectNode l = JSON.createObjectNode();
    l.put("kind", "dense").put("name", "d").put("units", 4).put("bias", true);
    l.put("activation", "elu");
    tensor(l, "weight", 5, 4);
    tensor(l, "bias", 4);
    Layer dense = load(5, l, 4);
    float[] x = features(6, 5);
    double[] expected = affine(toDouble(x), 6, 5, "weight", "bias", 4);
    for (int i = 0; i < expected.length; i++) {
      expected[i] = activation("elu", expected[i]);
    }
    float[] y = run(dense, graph(6), x);
    check(expected, y, seed, "dense");
    AttentionModel model =
        TestModels.withReferenceKernel(
            TestModels.load(
                TestModels.modelBytes(
                    JSON.writeValueAsBytes(
                        JSON.createObjectNode()
                            .put("format", "heed-model")
                            .put("format_version", 1)
                            .put("input_features", 5)
                            .<ObjectNode>set(
                                "class_labels", JSON.valueToTree(List.of("a", "b", "c", "d")))
                            .set(
                                "layers",
                                JSON.valueToTree(
                                    List.of(l, Map.of("kind", "softmax", "name", "p"))))),
                    arrays)));
    float[] p = model.forward(graph(6), x, PathChoice.SPARSE, false).values();
    double[] softmax = new double[expected.length];
    for (int i = 0; i < 6; i++) {
      double[] row = softmax(Arrays.copyOfRange(expected, i * 4, i * 4 + 4));
      System.arraycopy(row, 0, softmax, i * 4, 4);
    }
    check(softmax, p, seed, "softmax head");
  }
}
