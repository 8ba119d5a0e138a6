package dev.heed.model;

import dev.heed.graph.AttentionPattern;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.Objects;

/**
 * The part of a graph that a model's outputs at some target nodes depend on, planned layer by layer
 * by {@link AttentionModel#receptiveField}, and what {@link AttentionModel#forward(ReceptiveField,
 * float[], PathChoice, boolean)} then computes over.
 *
 * <p>An attention layer's output at node v reads its input at v and at v's in-neighbours; dense and
 * softmax layers read v only. So, walking the layers from the last back to the first, the rows a
 * layer must compute are the targets' in-neighbourhood of as many hops as there are attention
 * layers after it, and the rows it reads extend that by one hop. The field numbers its nodes in the
 * order this walk first reaches them (the targets first, in request order, then each hop's new
 * nodes), so the rows every layer computes are a prefix {@code 0..rowsComputed(layer)-1} of the
 * rows it reads, and each attention layer runs the ordinary kernel over a small local CSR pattern,
 * square over the rows it reads, whose rows past {@code rowsComputed} are empty.
 *
 * <p>A <em>whole-graph</em> field ({@link #wholeGraph()}) instead runs every layer over every node
 * in the graph's own numbering: when a layer attends over every node (full self-attention, so every
 * output depends on every node), when the graph is a {@link dev.heed.graph.CompletePattern}, or
 * when every node was requested.
 *
 * <p>A field planned with {@link KeptHubRows} stops at kept rows: a kept node's outputs are read
 * from them, so its in-neighbours are not needed. Kept nodes are numbered after every computed
 * node, and each attention layer but the first reads its computed input rows followed by the kept
 * rows met so far (copied from the kept outputs); a kept target's output is copied too.
 *
 * <p>Memory: the local node ids and each attention layer's local pattern, {@code O(nodes +
 * entries)} ints. Thread safety: immutable.
 */
public final class ReceptiveField {

  private final List<Layer> layers;
  private final int graphNodeCount;
  private final AttentionPattern wholePattern; // whole-graph fields only
  private final int[] nodeIds; // field nodes' global ids in local order; null: identity
  private final long[] targetIndex; // sorted (global << 32 | local) of the targets; null: identity
  private final int[] rowsRead;
  private final int[] rowsComputed;
  private final long[] entries;
  private final AttentionPattern[] patterns; // per layer; null for layers that do not attend
  private final int[] computedRead; // per layer: input rows computed (the rest are kept rows)
  private final int computedNodes; // kept node k's feature row is computedNodes + k
  private final int keptTargets; // targets whose outputs are copied from the kept rows
  private final KeptHubRows kept; // null: every row is computed
  private final FieldSize size;

  private ReceptiveField(
      List<Layer> layers,
      int graphNodeCount,
      AttentionPattern wholePattern,
      int[] nodeIds,
      long[] targetIndex,
      int targetCount,
      int[] rowsRead,
      int[] rowsComputed,
      long[] entries,
      AttentionPattern[] patterns,
      int[] computedRead,
      int computedNodes,
      int keptTargets,
      KeptHubRows kept) {
    this.layers = layers;
    this.graphNodeCount = graphNodeCount;
    this.wholePattern = wholePattern;
    this.nodeIds = nodeIds;
    this.targetIndex = targetIndex;
    this.rowsRead = rowsRead;
    this.rowsComputed = rowsComputed;
    this.entries = entries;
    this.patterns = patterns;
    this.computedRead = computedRead;
    this.computedNodes = computedNodes;
    this.keptTargets = keptTargets;
    this.kept = kept;
    long total = 0;
    for (long e : entries) {
      total += e;
    }
    int nodes = rowsRead.length == 0 ? targetCount : rowsRead[0];
    int keptNodes = nodeIds == null ? 0 : nodeIds.length - computedNodes;
    this.size = new FieldSize(targetCount, nodes, total, wholePattern != null, keptNodes);
  }

  /**
   * A field over local nodes: {@code nodeIds} holds the {@code computedNodes} computed nodes, the
   * first {@code targetCount - keptTargets} of them the targets computed, then the kept nodes, the
   * first {@code keptTargets} of them kept targets.
   */
  static ReceptiveField local(
      List<Layer> layers,
      int graphNodeCount,
      int[] nodeIds,
      int computedNodes,
      int targetCount,
      int keptTargets,
      int[] rowsRead,
      int[] rowsComputed,
      int[] computedRead,
      long[] entries,
      AttentionPattern[] patterns,
      KeptHubRows kept) {
    int computedTargets = targetCount - keptTargets;
    long[] index = new long[targetCount];
    for (int local = 0; local < computedTargets; local++) {
      index[local] = ((long) nodeIds[local] << 32) | local;
    }
    for (int k = 0; k < keptTargets; k++) {
      index[computedTargets + k] =
          ((long) nodeIds[computedNodes + k] << 32) | (computedTargets + k);
    }
    Arrays.sort(index);
    return new ReceptiveField(
        layers,
        graphNodeCount,
        null,
        nodeIds,
        index,
        targetCount,
        rowsRead,
        rowsComputed,
        entries,
        patterns,
        computedRead,
        computedNodes,
        keptTargets,
        nodeIds.length > computedNodes ? kept : null);
  }

  /** A whole-graph field: every layer over every node of {@code pattern}, in its own numbering. */
  static ReceptiveField whole(List<Layer> layers, AttentionPattern pattern, int targetCount) {
    int n = pattern.nodeCount();
    int count = layers.size();
    int[] rows = new int[count];
    long[] entries = new long[count];
    AttentionPattern[] patterns = new AttentionPattern[count];
    Arrays.fill(rows, n);
    for (int l = 0; l < count; l++) {
      switch (layers.get(l).reach()) {
        case SELF -> entries[l] = 0;
        case IN_NEIGHBOURS -> {
          entries[l] = pattern.entryCount();
          patterns[l] = pattern;
        }
        case EVERY_NODE -> entries[l] = (long) n * n;
      }
    }
    return new ReceptiveField(
        layers,
        n,
        pattern,
        null,
        null,
        targetCount,
        rows,
        rows,
        entries,
        patterns,
        rows,
        n,
        0,
        null);
  }

  /**
   * Returns the field's size: targets, nodes read, attention entries, and whether it is the whole
   * graph.
   *
   * @return the size
   */
  public FieldSize size() {
    return size;
  }

  /**
   * Returns whether every layer runs over every node of the graph (see the class comment).
   *
   * @return true for a whole-graph field
   */
  public boolean wholeGraph() {
    return wholePattern != null;
  }

  /**
   * Returns the number of nodes of the graph the field was planned on.
   *
   * @return n
   */
  public int graphNodeCount() {
    return graphNodeCount;
  }

  /**
   * Returns the number of distinct nodes whose features the field reads: the rows of its feature
   * matrix.
   *
   * @return the node count; n for a whole-graph field
   */
  public int nodeCount() {
    return size.nodes();
  }

  /**
   * Returns the number of distinct targets.
   *
   * @return the target count
   */
  public int targetCount() {
    return size.targets();
  }

  /**
   * Returns the graph node id of the field's {@code local}-th node: row {@code local} of the
   * feature matrix passed to {@link AttentionModel#forward(ReceptiveField, float[], PathChoice,
   * boolean)} must hold that node's features. The identity for a whole-graph field.
   *
   * @param local in {@code 0..nodeCount()-1}
   * @return the node id
   * @throws IndexOutOfBoundsException if {@code local} is out of range
   */
  public int nodeId(int local) {
    Objects.checkIndex(local, nodeCount());
    return nodeIds == null ? local : nodeIds[local];
  }

  /**
   * Returns the graph node ids of the field's nodes in local order (see {@link #nodeId(int)}).
   *
   * @return a new array of length {@link #nodeCount()}
   */
  public int[] nodeIds() {
    if (nodeIds != null) {
      return nodeIds.clone();
    }
    int[] identity = new int[nodeCount()];
    Arrays.setAll(identity, i -> i);
    return identity;
  }

  /**
   * Returns how many input rows a layer reads.
   *
   * @param layer a layer index of the model
   * @return the rows read
   * @throws IndexOutOfBoundsException if {@code layer} is out of range
   */
  public int rowsRead(int layer) {
    return rowsRead[layer];
  }

  /**
   * Returns how many output rows a layer computes (the rows the later layers need).
   *
   * @param layer a layer index of the model
   * @return the rows computed, at most {@link #rowsRead(int)}
   * @throws IndexOutOfBoundsException if {@code layer} is out of range
   */
  public int rowsComputed(int layer) {
    return rowsComputed[layer];
  }

  /**
   * Returns how many attention entries a layer touches (0 for a layer that does not attend).
   *
   * @param layer a layer index of the model
   * @return the entries
   * @throws IndexOutOfBoundsException if {@code layer} is out of range
   */
  public long entries(int layer) {
    return entries[layer];
  }

  /** The layers this field was planned for (compared by identity in forward). */
  List<Layer> layers() {
    return layers;
  }

  /** The pattern a graph-attention layer runs over, or null for other layers. */
  AttentionPattern pattern(int layer) {
    return patterns[layer];
  }

  /** The whole graph's pattern, or null for a local field. */
  AttentionPattern wholePattern() {
    return wholePattern;
  }

  /**
   * Returns the local row of a target, or -1 if {@code node} has no row in the output (not a
   * target). Every node has one in a whole-graph field. O(log targets).
   */
  int localRow(int node) {
    if (targetIndex == null) {
      return node >= 0 && node < graphNodeCount ? node : -1;
    }
    int lo = 0;
    int hi = targetIndex.length - 1;
    while (lo <= hi) {
      int mid = (lo + hi) >>> 1;
      int global = (int) (targetIndex[mid] >> 32);
      if (global < node) {
        lo = mid + 1;
      } else if (global > node) {
        hi = mid - 1;
      } else {
        return (int) targetIndex[mid];
      }
    }
    return -1;
  }

  /** The graph id of a local node (a row of the feature matrix), without a range check. */
  int globalId(int local) {
    return nodeIds == null ? local : nodeIds[local];
  }

  /** The graph id of a layer's local input row, without a range check. */
  int globalId(int layer, int local) {
    if (nodeIds == null) {
      return local;
    }
    int computed = computedRead[layer];
    return local < computed ? nodeIds[local] : nodeIds[computedNodes + local - computed];
  }

  /**
   * The input of layer {@code layer} with the kept rows appended, when it is an attention layer
   * that reads them from the kept outputs (not the first attention layer, whose kept rows are
   * feature rows); otherwise {@code x} itself.
   */
  float[] withKeptRows(int layer, float[] x) {
    if (kept == null
        || layers.get(layer).reach() != Layer.Reach.IN_NEIGHBOURS
        || computedRead[layer] == rowsRead[layer]
        || !attendsBefore(layer)) {
      return x;
    }
    int width = layers.get(layer).inputWidth();
    int computed = computedRead[layer];
    assert x.length == computed * width;
    float[] in = Arrays.copyOf(x, rowsRead[layer] * width);
    for (int k = 0; k < rowsRead[layer] - computed; k++) {
      kept.copyOutput(layer - 1, nodeIds[computedNodes + k], in, (computed + k) * width);
    }
    return in;
  }

  private boolean attendsBefore(int layer) {
    for (int l = 0; l < layer; l++) {
      if (layers.get(l).reach() == Layer.Reach.IN_NEIGHBOURS) {
        return true;
      }
    }
    return false;
  }

  /** The model's output rows with the kept targets' outputs appended after the computed ones. */
  float[] withKeptTargets(float[] x) {
    if (keptTargets == 0) {
      return x;
    }
    int last = layers.size() - 1;
    int width = layers.get(last).outputWidth();
    int computed = rowsComputed[last];
    assert x.length == computed * width;
    float[] out = Arrays.copyOf(x, (computed + keptTargets) * width);
    for (int k = 0; k < keptTargets; k++) {
      kept.copyOutput(last, nodeIds[computedNodes + k], out, (computed + k) * width);
    }
    return out;
  }

  /** The kept rows this field was planned with, or null. */
  KeptHubRows keptRows() {
    return kept;
  }

  @Override
  public String toString() {
    return String.format(
        Locale.ROOT,
        "ReceptiveField[%d targets, %d of %d nodes, %d entries%s]",
        size.targets(),
        size.nodes(),
        graphNodeCount,
        size.entries(),
        wholeGraph() ? ", whole graph" : "");
  }
}
