package dev.heed.internal.model;

import dev.heed.graph.AttentionPattern;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import java.util.Objects;

/**
 * Per-layer access to a model for code elsewhere in this module: which input rows a layer reads,
 * and running a range of layers over caller-chosen rows. The one implementation lives in {@code
 * dev.heed.model} and installs itself when {@link AttentionModel} is initialised (the same module's
 * other packages cannot call its package-private layer methods directly). Not exported.
 *
 * <p>Thread safety: the implementation is stateless; calls share nothing.
 */
public abstract class ModelSteps {

  /** A layer's output row reads its own input row only (dense, softmax). */
  public static final int READS_SELF = 0;

  /** A layer's output row reads its own and its in-neighbours' input rows (graph attention). */
  public static final int READS_IN_NEIGHBOURS = 1;

  /** A layer's output row reads every input row (full self-attention). */
  public static final int READS_EVERY_NODE = 2;

  private static volatile ModelSteps installed;

  /** For the implementation only. */
  protected ModelSteps() {}

  /**
   * Installs the implementation; called once, from {@code dev.heed.model}.
   *
   * @param steps the implementation
   */
  public static void install(ModelSteps steps) {
    Objects.requireNonNull(steps, "steps");
    if (installed == null) {
      installed = steps;
    }
  }

  /**
   * Returns the implementation, initialising {@link AttentionModel} first if needed.
   *
   * @return the implementation
   */
  public static ModelSteps get() {
    ModelSteps steps = installed;
    if (steps == null) {
      try {
        Class.forName(AttentionModel.class.getName(), true, AttentionModel.class.getClassLoader());
      } catch (ClassNotFoundException e) {
        throw new IllegalStateException(e);
      }
      steps = installed;
    }
    return steps;
  }

  /**
   * Returns which input rows a layer's output row reads.
   *
   * @param model the model
   * @param layer a layer index
   * @return {@link #READS_SELF}, {@link #READS_IN_NEIGHBOURS} or {@link #READS_EVERY_NODE}
   */
  public abstract int reads(AttentionModel model, int layer);

  /**
   * Runs layers {@code from..to-1}, of which at most one reads in-neighbours, over local rows: the
   * layers before that one map all {@code rowsIn} rows, that layer computes the first {@code
   * rowsOut} rows over {@code pattern}, and the layers after it map those {@code rowsOut} rows.
   * Without such a layer in the range, {@code rowsIn} must equal {@code rowsOut}.
   *
   * @param model the model
   * @param from first layer, inclusive
   * @param to last layer, exclusive
   * @param pattern square over {@code rowsIn}, rows past {@code rowsOut} empty; null without an
   *     attention layer in the range
   * @param rowsIn input rows
   * @param rowsOut output rows, a prefix of the input rows
   * @param input rowsIn × the first layer's input width, not modified
   * @param path the attention path
   * @return a new rowsOut × the last layer's output width array
   */
  public abstract float[] run(
      AttentionModel model,
      int from,
      int to,
      AttentionPattern pattern,
      int rowsIn,
      int rowsOut,
      float[] input,
      PathChoice path);

  /**
   * Returns how many values a layer's per-node projection holds (what the layer computes from each
   * input row alone, which a caller may keep between calls), or 0 if the layer has none to offer.
   *
   * @param model the model
   * @param layer a layer index
   * @return the width, or 0
   */
  public abstract int projectionWidth(AttentionModel model, int layer);

  /**
   * Computes a layer's per-node projection of {@code rows} input rows.
   *
   * @param model the model
   * @param layer a layer index with a non-zero {@link #projectionWidth}
   * @param input rows × the layer's input width, not modified
   * @param rows the rows
   * @return a new rows × projectionWidth array
   */
  public abstract float[] project(AttentionModel model, int layer, float[] input, int rows);

  /**
   * {@link #run} for a range whose first layer reads in-neighbours and has a projection: that layer
   * reads the kept projections of its {@code rowsIn} rows straight from the caller's table, and the
   * input rows of the first {@code rowsOut} (for its residual), instead of projecting every input
   * row; the layers after it map the {@code rowsOut} rows.
   *
   * @param model the model
   * @param from the attention layer, inclusive
   * @param to last layer, exclusive
   * @param pattern square over {@code rowsIn}, rows past {@code rowsOut} empty
   * @param rowsIn rows read
   * @param rowsOut rows computed
   * @param table every node's projection, row-major (projectionWidth values each), not modified
   * @param rows local row r is row {@code rows[r]} of the table, for r in {@code 0..rowsIn-1}
   * @param targetInput rowsOut × the layer's input width, not modified
   * @param path the attention path
   * @return a new rowsOut × the last layer's output width array
   */
  public abstract float[] runProjected(
      AttentionModel model,
      int from,
      int to,
      AttentionPattern pattern,
      int rowsIn,
      int rowsOut,
      float[] table,
      int[] rows,
      float[] targetInput,
      PathChoice path);

  /**
   * Returns the LeakyReLU negative slope of a GAT layer with additive scores (Veličković et al.
   * 2018: e_ij = LeakyReLU(a_target·Wh_i + a_source·Wh_j)), whose {@link #project projection} of a
   * node holds its projected features (heads × headWidth), then each head's source term, then each
   * head's target term; NaN for any other layer.
   *
   * @param model the model
   * @param layer a layer index
   * @return the slope, or NaN
   */
  public abstract float additiveSlope(AttentionModel model, int layer);

  /**
   * The rest of {@link #runProjected} once the attention layer's per-head weighted sums are known:
   * that layer's finish (combining heads, bias, residual, activation) and the per-node layers after
   * it, for {@code rows} rows.
   *
   * @param model the model
   * @param from the attention layer
   * @param to last layer, exclusive; the layers after {@code from} read their own row only
   * @param attended rows × heads × headWidth weighted sums, row-major, head-major within a row; may
   *     be overwritten
   * @param targetInput rows × the attention layer's input width (for its residual), not modified
   * @param rows the rows
   * @param path the path (for the per-node layers' choices)
   * @return a new rows × the last layer's output width array
   */
  public abstract float[] finishProjected(
      AttentionModel model,
      int from,
      int to,
      float[] attended,
      float[] targetInput,
      int rows,
      PathChoice path);
}
