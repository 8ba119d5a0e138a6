package dev.heed.model;

import dev.heed.attention.ComputePath;
import dev.heed.attention.PathEstimate;
import java.util.Objects;
import java.util.Optional;

/**
 * How one layer ran in one {@link AttentionModel#forward} call: which attention path it took (for
 * {@link PathChoice#AUTO}, after any fallback, with the times the cost model predicted for each
 * path), how long it took on the wall clock, and how much it computed: the rows it read and
 * computed and the attention entries it touched (all n rows in a whole-graph pass; the layer's
 * share of the receptive field in a {@link ReceptiveField} pass). For reports and diagnostics, such
 * as the command-line tool's per-layer summary; not a benchmark (use JMH for that).
 *
 * <p>Thread safety: immutable.
 */
public final class LayerRun {

  private final int layerIndex;
  private final String layerName;
  private final String kind;
  private final ComputePath path;
  private final long nanos;
  private final int rowsRead;
  private final int rowsComputed;
  private final long entries;
  private final PathEstimate estimate; // null unless AUTO chose the path

  LayerRun(
      int layerIndex,
      String layerName,
      String kind,
      ComputePath path,
      long nanos,
      int rowsRead,
      int rowsComputed,
      long entries,
      PathEstimate estimate) {
    this.layerIndex = layerIndex;
    this.layerName = Objects.requireNonNull(layerName, "layerName");
    this.kind = Objects.requireNonNull(kind, "kind");
    this.path = path;
    this.nanos = nanos;
    this.rowsRead = rowsRead;
    this.rowsComputed = rowsComputed;
    this.entries = entries;
    this.estimate = estimate;
  }

  /**
   * Returns the layer's position in the model, from 0.
   *
   * @return the index
   */
  public int layerIndex() {
    return layerIndex;
  }

  /**
   * Returns the layer's name.
   *
   * @return the name
   */
  public String layerName() {
    return layerName;
  }

  /**
   * Returns the layer's kind as written in model files, for example {@code "graph_attention"}.
   *
   * @return the kind
   */
  public String kind() {
    return kind;
  }

  /**
   * Returns the path the layer's attention ran on.
   *
   * @return the path, or empty for a layer that does not attend (dense, softmax)
   */
  public Optional<ComputePath> path() {
    return Optional.ofNullable(path);
  }

  /**
   * Returns the layer's wall-clock time in this call, measured with {@link System#nanoTime()}
   * around the whole layer (projections, attention, activation).
   *
   * @return nanoseconds, at least 0
   */
  public long nanos() {
    return nanos;
  }

  /**
   * Returns how many input rows (nodes) the layer read.
   *
   * @return the rows read; n in a whole-graph pass
   */
  public int rowsRead() {
    return rowsRead;
  }

  /**
   * Returns how many output rows (nodes) the layer computed.
   *
   * @return the rows computed, at most {@link #rowsRead()}; n in a whole-graph pass
   */
  public int rowsComputed() {
    return rowsComputed;
  }

  /**
   * Returns how many attention entries (target, source pairs) the layer's kernel ran over.
   *
   * @return the entries; 0 for a layer that does not attend, n² for the complete pattern
   */
  public long entries() {
    return entries;
  }

  /**
   * Returns the times the path cost model predicted for the layer's attention on each path, when
   * {@link PathChoice#AUTO} chose its path by them (summed over the layer's attention calls).
   * {@link #path()} is the faster one unless its kernel was missing, or the dense path was faster
   * by no more than its start-up and its back end had not started ({@link PathChoice}).
   *
   * @return the prediction, or empty for an explicit path or a layer that does not attend
   */
  public Optional<PathEstimate> estimate() {
    return Optional.ofNullable(estimate);
  }

  @Override
  public String toString() {
    return layerName
        + " ("
        + kind
        + (path == null ? "" : ", " + path)
        + ", "
        + String.format(java.util.Locale.ROOT, "%.3f s", nanos / 1e9)
        + (estimate == null ? "" : "; AUTO " + estimate)
        + ")";
  }
}
