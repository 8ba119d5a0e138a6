package dev.heed.model;

import java.util.List;
import java.util.NoSuchElementException;
import java.util.Objects;

/**
 * What one {@link AttentionModel#forward(ReceptiveField, float[], PathChoice, boolean)} call
 * produced: the last layer's output (class probabilities) at each target, how each layer ran, the
 * field's size, and, if requested, the attention weights each layer gave the targets' sources.
 *
 * <p>Thread safety: immutable; accessors copy.
 */
public final class FieldOutput {

  private final ReceptiveField field;
  private final int width;
  private final float[] values; // local rows, the targets first
  private final List<LayerAttention> attention;
  private final List<LayerRun> layerRuns;

  FieldOutput(
      ReceptiveField field,
      int width,
      float[] values,
      List<LayerAttention> attention,
      List<LayerRun> layerRuns) {
    this.field = field;
    this.width = width;
    this.values = values;
    this.attention = List.copyOf(attention);
    this.layerRuns = List.copyOf(layerRuns);
  }

  /**
   * Returns the size of the field the call ran over.
   *
   * @return the size
   */
  public FieldSize size() {
    return field.size();
  }

  /**
   * Returns the number of outputs per node (the class count).
   *
   * @return the width
   */
  public int width() {
    return width;
  }

  /**
   * Returns whether {@code node} has an output row: a target, or any node of a whole-graph field.
   *
   * @param node a node id
   * @return true if {@link #row(int)} answers for it
   */
  public boolean hasRow(int node) {
    return field.localRow(node) >= 0;
  }

  /**
   * Returns one target's outputs.
   *
   * @param node a target's node id (any node id for a whole-graph field)
   * @return a new array of length {@link #width()}
   * @throws NoSuchElementException if {@code node} was not a target
   */
  public float[] row(int node) {
    int local = field.localRow(node);
    if (local < 0) {
      throw new NoSuchElementException(
          "node " + node + " was not a target of this receptive field, so it has no output row");
    }
    float[] r = new float[width];
    System.arraycopy(values, local * width, r, 0, width);
    return r;
  }

  /**
   * Returns the attention weights recorded, one entry per attention layer in model order; empty
   * unless the call asked to keep them. They answer for the targets (in node ids).
   *
   * @return an unmodifiable list
   */
  public List<LayerAttention> attention() {
    return attention;
  }

  /**
   * Returns how each layer ran (rows, entries, path, wall-clock time), one entry per layer in model
   * order.
   *
   * @return an unmodifiable list
   */
  public List<LayerRun> layerRuns() {
    return layerRuns;
  }

  @Override
  public String toString() {
    return "FieldOutput[" + Objects.toString(field) + "]";
  }
}
