package dev.heed.model;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
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
  private final boolean keepAttention;
  private final List<LayerAttention> attention = new ArrayList<>();
  private final List<LayerRun> layerRuns = new ArrayList<>();
  private int layerIndex;
  private ComputePath layerPath;
  private long layerEntries;

  /** A pass over every node of {@code graph}. */
  ForwardPass(
      AttentionPattern graph, PathChoice choice, KernelSource kernels, boolean keepAttention) {
    this(null, graph, choice, kernels, keepAttention);
  }

  /** A pass over {@code field}'s rows. */
  ForwardPass(
      ReceptiveField field, PathChoice choice, KernelSource kernels, boolean keepAttention) {
    this(field, field.wholePattern(), choice, kernels, keepAttention);
  }

  private ForwardPass(
      ReceptiveField field,
      AttentionPattern graph,
      PathChoice choice,
      KernelSource kernels,
      boolean keepAttention) {
    this.field = field;
    this.choice = choice;
    this.kernels = kernels;
    this.keepAttention = keepAttention;
    if (graph != null) {
      this.rowsIn = graph.nodeCount();
      this.rowsOut = graph.nodeCount();
      this.pattern = graph;
    }
  }

  /** A pass over {@code rows} rows without a graph, for layers that compute each row alone. */
  static ForwardPass perNode(int rows) {
    ForwardPass pass = new ForwardPass(null, null, PathChoice.AUTO, null, false);
    pass.rowsIn = rows;
    pass.rowsOut = rows;
    return pass;
  }

  void startLayer(int index) {
    this.layerIndex = index;
    this.layerPath = null;
    this.layerEntries = 0;
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
            layerEntries));
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
    AttentionKernel kernel = kernelFor(pattern, score);
    layerPath = kernel.path();
    layerEntries += pattern.entryCount();
    float[] out = new float[pattern.nodeCount() * shape.valueWidth()];
    float[] weights = null;
    if (keepAttention) {
      long size = pattern.entryCount() * shape.heads();
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

  private AttentionKernel kernelFor(AttentionPattern pattern, ScoreFunction score) {
    ComputePath path = choice.pathFor(pattern, score);
    if (choice != PathChoice.AUTO) {
      return kernels.kernel(path);
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
