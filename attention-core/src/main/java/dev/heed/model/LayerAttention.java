package dev.heed.model;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;

/**
 * The attention weights one attention layer used in one model call: for each target node, a weight
 * per source in its neighbourhood and per head (each head's weights over a neighbourhood sum to 1).
 * Methods take and return the graph's node ids.
 *
 * <p>Sources of a target are numbered {@code 0..sourceCount(target)-1} in pattern order: ascending
 * node id in a whole-graph pass; in a {@link ReceptiveField} pass, the field's local order (the
 * same sources, so the same weights, in another order). A receptive-field pass answers for its
 * targets only. Memory: {@code 4 · E · heads} bytes for the E entries computed.
 *
 * <p>Thread safety: immutable.
 */
public final class LayerAttention {

  private final int layerIndex;
  private final String layerName;
  private final AttentionPattern pattern;
  private final int heads;
  private final float[] weights;
  private final ReceptiveField field; // null: the pattern is in the graph's own ids

  LayerAttention(
      int layerIndex,
      String layerName,
      AttentionPattern pattern,
      int heads,
      float[] weights,
      ReceptiveField field) {
    this.layerIndex = layerIndex;
    this.layerName = layerName;
    this.pattern = pattern;
    this.heads = heads;
    this.weights = weights;
    this.field = field;
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
   * Returns the number of heads.
   *
   * @return at least 1
   */
  public int heads() {
    return heads;
  }

  /**
   * Returns the pattern the layer attended over.
   *
   * @return the graph, or the complete pattern for full self-attention; in a receptive-field pass,
   *     the local pattern over the field's nodes (local id i is {@link ReceptiveField#nodeId(int)
   *     nodeId(i)})
   */
  public AttentionPattern pattern() {
    return pattern;
  }

  /**
   * Returns how many sources {@code target} attended to.
   *
   * @param target a node id
   * @return the neighbourhood size
   * @throws IndexOutOfBoundsException if {@code target} is out of range, or not a target of a
   *     receptive-field pass
   */
  public int sourceCount(int target) {
    return pattern.degree(row(target));
  }

  /**
   * Returns the node id of a target's t-th source.
   *
   * @param target a node id
   * @param t in {@code 0..sourceCount(target)-1}
   * @return the source node id
   */
  public int source(int target, int t) {
    int row = checkSource(target, t);
    int local = pattern instanceof CsrGraph g ? g.column(g.rowStart(row) + t) : t;
    return field == null ? local : field.globalId(layerIndex, local);
  }

  /**
   * Returns one head's weight on a target's t-th source.
   *
   * @param target a node id
   * @param t in {@code 0..sourceCount(target)-1}
   * @param head in {@code 0..heads-1}
   * @return α for that pair and head
   */
  public float weight(int target, int t, int head) {
    int row = checkSource(target, t);
    if (head < 0 || head >= heads) {
      throw new IndexOutOfBoundsException("head " + head + " out of range 0.." + (heads - 1));
    }
    return weights[(int) (entry(row, t) * heads + head)];
  }

  /**
   * Returns the weight on a target's t-th source averaged over heads.
   *
   * @param target a node id
   * @param t in {@code 0..sourceCount(target)-1}
   * @return the mean of the heads' α
   */
  public float meanWeight(int target, int t) {
    int row = checkSource(target, t);
    int base = (int) (entry(row, t) * heads);
    double sum = 0;
    for (int h = 0; h < heads; h++) {
      sum += weights[base + h];
    }
    return (float) (sum / heads);
  }

  private long entry(int row, int t) {
    if (pattern instanceof CsrGraph g) {
      return g.rowStart(row) + t;
    }
    assert pattern instanceof CompletePattern;
    return (long) row * pattern.nodeCount() + t;
  }

  /** The pattern row of a target node. */
  private int row(int target) {
    if (field == null) {
      return target;
    }
    int row = field.localRow(target);
    if (row < 0) {
      throw new IndexOutOfBoundsException(
          "node "
              + target
              + " was not a target of this receptive-field pass, so layer '"
              + layerName
              + "' kept no row for it");
    }
    return row;
  }

  private int checkSource(int target, int t) {
    int row = row(target);
    int count = pattern.degree(row);
    if (t < 0 || t >= count) {
      throw new IndexOutOfBoundsException(
          "source " + t + " out of range: node " + target + " has " + count + " sources");
    }
    return row;
  }
}
