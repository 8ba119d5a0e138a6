package dev.heed.model;

import java.util.List;

/**
 * What one {@link AttentionModel#forward} call produced: the last layer's output for every node
 * (class probabilities, since a model ends with its {@link SoftmaxLayer}) and, if requested, the
 * attention weights of every attention layer.
 *
 * <p>Thread safety: immutable; accessors copy.
 */
public final class ModelOutput {

  private final int nodeCount;
  private final int width;
  private final float[] values;
  private final List<LayerAttention> attention;
  private final List<LayerRun> layerRuns;

  ModelOutput(
      int nodeCount,
      int width,
      float[] values,
      List<LayerAttention> attention,
      List<LayerRun> layerRuns) {
    this.nodeCount = nodeCount;
    this.width = width;
    this.values = values;
    this.attention = List.copyOf(attention);
    this.layerRuns = List.copyOf(layerRuns);
  }

  /**
   * Returns the number of nodes.
   *
   * @return n
   */
  public int nodeCount() {
    return nodeCount;
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
   * Returns one output value.
   *
   * @param node in {@code 0..n-1}
   * @param index in {@code 0..width-1}
   * @return the value
   * @throws IndexOutOfBoundsException if either index is out of range
   */
  public float value(int node, int index) {
    java.util.Objects.checkIndex(node, nodeCount);
    java.util.Objects.checkIndex(index, width);
    return values[node * width + index];
  }

  /**
   * Returns one node's outputs.
   *
   * @param node in {@code 0..n-1}
   * @return a new array of length {@link #width()}
   */
  public float[] row(int node) {
    java.util.Objects.checkIndex(node, nodeCount);
    float[] r = new float[width];
    System.arraycopy(values, node * width, r, 0, width);
    return r;
  }

  /**
   * Returns all outputs, row-major n × width.
   *
   * @return a new array
   */
  public float[] values() {
    return values.clone();
  }

  /**
   * Returns the attention weights recorded, one entry per attention layer in model order; empty
   * unless the call asked to keep them.
   *
   * @return an unmodifiable list
   */
  public List<LayerAttention> attention() {
    return attention;
  }

  /**
   * Returns how each layer ran in this call (attention path and wall-clock time), one entry per
   * layer in model order.
   *
   * @return an unmodifiable list of {@code model.layers().size()} entries
   */
  public List<LayerRun> layerRuns() {
    return layerRuns;
  }
}
