package dev.heed.model;

import dev.heed.attention.MemoryBudget;
import dev.heed.graph.CsrGraph;
import java.util.List;
import java.util.Locale;

/**
 * The layer outputs of one graph's high-in-degree rows ("hub rows": rows with at least {@link
 * #minInDegree()} entries), computed once for one feature matrix, so that receptive fields planned
 * with them ({@link AttentionModel#receptiveField(CsrGraph, int[], FieldCap, KeptHubRows,
 * boolean)}) stop at a hub: a hub's output of a layer is read from here instead of being computed
 * from its in-neighbours.
 *
 * <p>What is kept: the model's layers are cut into stages, one per attention layer (with the
 * per-node layers after it; the first stage also with those before it). For every hub, the output
 * of every stage is kept: the input of every attention layer but the first (the first reads
 * features, which every query reads directly) and the model's output (class probabilities), so that
 * a hub target is a lookup. With the benchmark model (two GAT layers of 8 heads × 8 dims, dense to
 * 4 classes, softmax) that is 64 + 4 floats per hub.
 *
 * <p>Why it bounds a query: a row that is not kept has fewer than {@code T = minInDegree()}
 * sources, each of them kept or again a row of fewer than T sources. So a target that is not a hub
 * computes at most about T + T² + … + T^L attention entries over a model of L attention layers (T
 * per hop, each hop's rows that are not kept expanding again), whatever the hubs' degrees; a hub
 * target is a lookup.
 *
 * <p>Preparation ({@link AttentionModel#keepHubRows}) runs the model once over the hubs' receptive
 * field (the rows the hubs' outputs depend on, up to the whole graph), with the same layer code a
 * whole-graph pass runs, so the kept rows equal a whole-graph pass's to float rounding. Memory
 * ({@link #bytes()}): 4 bytes per node (the hub index) plus 4 bytes per kept value.
 *
 * <p>Thread safety: immutable; the arrays are written once before the object is published and never
 * again, so any number of threads may plan and run fields with it at once.
 */
public final class KeptHubRows {

  /** A local id marks a kept node when this bit is set (planning only). */
  static final int KEPT_FLAG = 1 << 30;

  private final List<Layer> layers;
  private final CsrGraph graph;
  private final int minInDegree;
  private final int[] hubIndex; // per node: its index among the hubs, or -1
  private final int hubCount;
  private final float[][] outputs; // per layer j: hubCount × outputWidth(j) after layer j, or null
  private final long bytes;

  private KeptHubRows(
      List<Layer> layers,
      CsrGraph graph,
      int minInDegree,
      int[] hubIndex,
      int hubCount,
      float[][] outputs) {
    this.layers = layers;
    this.graph = graph;
    this.minInDegree = minInDegree;
    this.hubIndex = hubIndex;
    this.hubCount = hubCount;
    this.outputs = outputs;
    long total = 4L * hubIndex.length;
    for (float[] o : outputs) {
      total += o == null ? 0 : 4L * o.length;
    }
    this.bytes = total;
  }

  /**
   * Whether the output after layer {@code j} is kept: it is an attention layer's input (not the
   * first attention layer's), or the model's output.
   */
  static boolean[] keptLayers(List<Layer> layers) {
    boolean[] kept = new boolean[layers.size()];
    boolean attentionSeen = false;
    for (int j = 0; j < layers.size(); j++) {
      boolean attends = layers.get(j).reach() == Layer.Reach.IN_NEIGHBOURS;
      if (attends && attentionSeen) {
        kept[j - 1] = true;
      }
      attentionSeen |= attends;
    }
    if (attentionSeen) {
      kept[layers.size() - 1] = true;
    }
    return kept;
  }

  /**
   * Computes the hubs' outputs: plans the hubs' receptive field (no cap), gathers its features and
   * runs the model over it, keeping each kept layer's output at the hubs (the field's first rows).
   * The caller has checked the model (no layer over every node), the graph and the features.
   */
  static KeptHubRows prepare(
      AttentionModel model, CsrGraph graph, float[] features, int minInDegree, PathChoice path) {
    List<Layer> layers = model.layers();
    int n = graph.nodeCount();
    boolean[] keep = keptLayers(layers);
    boolean attends = keep[layers.size() - 1];
    MemoryBudget.check("the hub index of " + n + " nodes", 4L * n);
    int[] hubIndex = new int[n];
    int hubCount = 0;
    for (int v = 0; v < n; v++) {
      boolean hub = attends && graph.degree(v) >= minInDegree;
      hubIndex[v] = hub ? hubCount++ : -1;
    }
    long keptFloats = 0;
    for (int j = 0; j < keep.length; j++) {
      keptFloats += keep[j] ? (long) hubCount * layers.get(j).outputWidth() : 0;
    }
    MemoryBudget.check(
        String.format(
            Locale.ROOT,
            "the kept outputs of %,d hub rows (in-degree at least %,d)",
            hubCount,
            minInDegree),
        4 * keptFloats);
    float[][] outputs = new float[layers.size()][];
    for (int j = 0; j < keep.length; j++) {
      if (keep[j]) {
        long length = (long) hubCount * layers.get(j).outputWidth();
        if (length > Integer.MAX_VALUE - 8) {
          throw new IllegalArgumentException(
              hubCount
                  + " hub rows × "
                  + layers.get(j).outputWidth()
                  + " outputs of layer '"
                  + layers.get(j).name()
                  + "' exceed one Java array; raise the minimum in-degree of a kept row");
        }
        outputs[j] = new float[(int) length];
      }
    }
    if (hubCount > 0) {
      int[] hubs = new int[hubCount];
      for (int v = 0; v < n; v++) {
        if (hubIndex[v] >= 0) {
          hubs[hubIndex[v]] = v;
        }
      }
      ReceptiveField field = FieldPlanner.plan(layers, graph, hubs, FieldCap.NONE, null, false);
      int f = model.inputFeatureCount();
      long fieldFloats = (long) field.nodeCount() * f;
      MemoryBudget.check(
          "the features of the hub rows' receptive field (" + field.nodeCount() + " nodes)",
          4 * fieldFloats);
      if (fieldFloats > Integer.MAX_VALUE - 8) {
        throw new IllegalArgumentException(
            "the hub rows' receptive field of "
                + field.nodeCount()
                + " nodes × "
                + f
                + " features exceeds one Java array; raise the minimum in-degree of a kept row");
      }
      float[] x = new float[(int) fieldFloats];
      for (int local = 0; local < field.nodeCount(); local++) {
        System.arraycopy(features, field.globalId(local) * f, x, local * f, f);
      }
      model.forwardKeeping(field, x, path, outputs);
    }
    return new KeptHubRows(layers, graph, minInDegree, hubIndex, hubCount, outputs);
  }

  /**
   * Returns the graph the rows were computed on; fields planned with them must be planned on it.
   *
   * @return the graph
   */
  public CsrGraph graph() {
    return graph;
  }

  /**
   * Returns the least in-degree (row length, self-loop included) of a kept row.
   *
   * @return T
   */
  public int minInDegree() {
    return minInDegree;
  }

  /**
   * Returns the number of hub rows kept.
   *
   * @return the count, 0 when no row reaches {@link #minInDegree()} or the model has no attention
   *     layer
   */
  public int hubCount() {
    return hubCount;
  }

  /**
   * Returns the bytes held: 4 per graph node (the hub index) and 4 per kept value.
   *
   * @return the bytes
   */
  public long bytes() {
    return bytes;
  }

  /** The layers these rows were computed for (compared by identity). */
  List<Layer> layers() {
    return layers;
  }

  /** Whether {@code node}'s outputs are kept. */
  boolean isKept(int node) {
    return hubIndex[node] >= 0;
  }

  /** Copies kept node {@code node}'s output after layer {@code j} into {@code into}. */
  void copyOutput(int j, int node, float[] into, int offset) {
    int width = layers.get(j).outputWidth();
    System.arraycopy(outputs[j], hubIndex[node] * width, into, offset, width);
  }

  @Override
  public String toString() {
    return String.format(
        Locale.ROOT,
        "KeptHubRows[%,d of %,d rows with in-degree >= %,d, %,d bytes]",
        hubCount,
        hubIndex.length,
        minInDegree,
        bytes);
  }
}
