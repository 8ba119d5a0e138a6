package dev.heed.model;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.MemoryBudget;
import dev.heed.attention.PathCosts;
import dev.heed.attention.PathEstimate;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.atomic.AtomicBoolean;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The state of one model call: the rows and pattern of the current layer, the kernel choice and the
 * attention weights recorded so far. A whole-graph pass runs every layer over all n rows of its
 * graph; a receptive-field pass takes each layer's rows and local pattern from its {@link
 * ReceptiveField}. Created per call and confined to the calling thread.
 */
final class ForwardPass {

  private static final Logger LOG = LoggerFactory.getLogger(ForwardPass.class);
  private static final AtomicBoolean WARNED_FALLBACK = new AtomicBoolean();

  /** The field of a receptive-field pass (or a whole-graph one), or null for a plain pass. */
  private final ReceptiveField field;

  /** Input rows of the current layer. */
  int rowsIn;

  /** Output rows of the current layer: the first {@code rowsOut} of its input rows. */
  int rowsOut;

  /** The pattern the current layer's graph attention runs over: square over {@code rowsIn}. */
  AttentionPattern pattern;

  private final PathChoice choice;
  private final KernelSource kernels;
  private final PathCosts costs; // null unless AUTO
  private final int threads;
  private final boolean keepAttention;
  private final List<LayerAttention> attention = new ArrayList<>();
  private final List<LayerRun> layerRuns = new ArrayList<>();
  private int layerIndex;
  private ComputePath layerPath;
  private long layerEntries;
  private PathEstimate layerEstimate;

  /** A pass over every node of {@code graph}. */
  ForwardPass(
      AttentionPattern graph,
      PathChoice choice,
      KernelSource kernels,
      PathCosts costs,
      int threads,
      boolean keepAttention) {
    this(null, graph, choice, kernels, costs, threads, keepAttention);
  }

  /**
   * A pass over caller-chosen local rows: {@code rowsIn} rows in and out until the caller sets
   * {@code rowsOut} (incremental scoring runs a few layers at a time this way).
   */
  ForwardPass(
      AttentionPattern pattern,
      int rowsIn,
      PathChoice choice,
      KernelSource kernels,
      PathCosts costs,
      int threads) {
    this(null, null, choice, kernels, costs, threads, false);
    this.rowsIn = rowsIn;
    this.rowsOut = rowsIn;
    this.pattern = pattern;
  }

  /** A pass over {@code field}'s rows. */
  ForwardPass(
      ReceptiveField field,
      PathChoice choice,
      KernelSource kernels,
      PathCosts costs,
      int threads,
      boolean keepAttention) {
    this(field, field.wholePattern(), choice, kernels, costs, threads, keepAttention);
  }

  private ForwardPass(
      ReceptiveField field,
      AttentionPattern graph,
      PathChoice choice,
      KernelSource kernels,
      PathCosts costs,
      int threads,
      boolean keepAttention) {
    assert choice != PathChoice.AUTO || costs != null;
    this.field = field;
    this.choice = choice;
    this.kernels = kernels;
    this.costs = costs;
    this.threads = threads;
    this.keepAttention = keepAttention;
    if (graph != null) {
      this.rowsIn = graph.nodeCount();
      this.rowsOut = graph.nodeCount();
      this.pattern = graph;
    }
  }

  /** A pass over {@code rows} rows without a graph, for layers that compute each row alone. */
  static ForwardPass perNode(int rows) {
    // no attention layer runs in it, so no path is chosen
    ForwardPass pass = new ForwardPass(null, null, PathChoice.SPARSE, null, null, 1, false);
    pass.rowsIn = rows;
    pass.rowsOut = rows;
    return pass;
  }

  void startLayer(int index) {
    this.layerIndex = index;
    this.layerPath = null;
    this.layerEntries = 0;
    this.layerEstimate = null;
    if (field != null && field.wholePattern() == null) {
      rowsIn = field.rowsRead(index);
      rowsOut = field.rowsComputed(index);
      pattern = field.pattern(index);
    }
  }

  /** Records how the current layer ran; call after {@link Layer#forward}. */
  void endLayer(Layer layer, long nanos) {
    layerRuns.add(
        new LayerRun(
            layerIndex,
            layer.name(),
            layer.kind(),
            layerPath,
            nanos,
            rowsIn,
            rowsOut,
            layerEntries,
            layerEstimate));
  }

  List<LayerRun> layerRuns() {
    return List.copyOf(layerRuns);
  }

  List<LayerAttention> attention() {
    return List.copyOf(attention);
  }

  /**
   * Runs the kernel for one attention call and records its weights if asked to. Returns a new
   * {@code pattern.nodeCount()} × valueWidth output array.
   */
  float[] attend(
      Layer layer,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value) {
    AttentionKernel kernel = kernelFor(layer, pattern, score, shape);
    layerPath = kernel.path();
    layerEntries += pattern.entryCount();
    long outFloats = (long) pattern.nodeCount() * shape.valueWidth();
    long weightFloats = keepAttention ? pattern.entryCount() * shape.heads() : 0;
    MemoryBudget.check(
        "layer '"
            + layer.name()
            + "' over "
            + pattern.nodeCount()
            + " nodes"
            + (keepAttention ? " and " + pattern.entryCount() + " kept attention entries" : ""),
        4 * (outFloats + weightFloats));
    float[] out = new float[pattern.nodeCount() * shape.valueWidth()];
    float[] weights = null;
    if (keepAttention) {
      long size = weightFloats;
      if (size > Integer.MAX_VALUE - 8) {
        throw new IllegalArgumentException(
            "cannot keep attention weights for layer '"
                + layer.name()
                + "': "
                + pattern.entryCount()
                + " entries × "
                + shape.heads()
                + " heads exceed one Java array; classify without explanations");
      }
      weights = new float[(int) size];
    }
    kernel.attend(pattern, score, shape, query, key, value, out, weights);
    if (weights != null) {
      attention.add(
          new LayerAttention(
              layerIndex,
              layer.name(),
              pattern,
              shape.heads(),
              weights,
              field == null || field.wholePattern() != null ? null : field));
    }
    return out;
  }

  private AttentionKernel kernelFor(
      Layer layer, AttentionPattern pattern, ScoreFunction score, HeadShape shape) {
    if (choice != PathChoice.AUTO) {
      return kernels.kernel(choice.pathFor(pattern, score, shape, threads, null));
    }
    PathEstimate estimate = costs.estimate(pattern, score, shape, threads);
    layerEstimate = layerEstimate == null ? estimate : layerEstimate.plus(estimate);
    ComputePath path = PathChoice.autoPath(estimate, kernels.startUpSeconds(ComputePath.DENSE));
    if (LOG.isDebugEnabled()) {
      LOG.debug(
          "AUTO: layer {} '{}' ({} nodes, {} entries, {}): {} path; {}",
          layerIndex,
          layer.name(),
          pattern.nodeCount(),
          pattern.entryCount(),
          score.getClass().getSimpleName(),
          path,
          estimate);
    }
    try {
      return kernels.kernel(path);
    } catch (IllegalStateException missing) {
      ComputePath other = path == ComputePath.DENSE ? ComputePath.SPARSE : ComputePath.DENSE;
      if (WARNED_FALLBACK.compareAndSet(false, true)) {
        LOG.warn(
            "AUTO chose the {} path but: {}; using the {} path", path, missing.getMessage(), other);
      }
      return kernels.kernel(other);
    }
  }
}
