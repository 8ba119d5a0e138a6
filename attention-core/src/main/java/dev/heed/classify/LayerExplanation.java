package dev.heed.classify;

import java.util.List;

/**
 * For one node and one attention layer: the neighbours that received the most attention, averaged
 * over heads, and the same per head.
 *
 * <p>Thread safety: immutable.
 */
public final class LayerExplanation {

  private final int layerIndex;
  private final String layerName;
  private final List<NeighbourWeight> topNeighbours;
  private final List<List<NeighbourWeight>> topNeighboursPerHead;

  LayerExplanation(
      int layerIndex,
      String layerName,
      List<NeighbourWeight> topNeighbours,
      List<List<NeighbourWeight>> topNeighboursPerHead) {
    this.layerIndex = layerIndex;
    this.layerName = layerName;
    this.topNeighbours = List.copyOf(topNeighbours);
    this.topNeighboursPerHead = topNeighboursPerHead.stream().map(List::copyOf).toList();
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
    return topNeighboursPerHead.size();
  }

  /**
   * Returns up to k neighbours with the largest attention weight averaged over heads, largest first
   * (ties: smaller node id first).
   *
   * @return an unmodifiable list
   */
  public List<NeighbourWeight> topNeighbours() {
    return topNeighbours;
  }

  /**
   * Returns up to k neighbours with the largest weight in one head, largest first.
   *
   * @param head in {@code 0..heads-1}
   * @return an unmodifiable list
   * @throws IndexOutOfBoundsException if {@code head} is out of range
   */
  public List<NeighbourWeight> topNeighbours(int head) {
    return topNeighboursPerHead.get(head);
  }

  @Override
  public String toString() {
    return layerName + ": " + topNeighbours;
  }
}
