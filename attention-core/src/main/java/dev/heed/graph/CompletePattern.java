package dev.heed.graph;

import java.util.Objects;

/**
 * The complete pattern on {@code n} nodes: every target attends to every source, itself included.
 * It stores nothing beyond {@code n}. Attention over this pattern is full self-attention (common
 * practice: the adjacency of self-attention is all ones).
 *
 * <p>Entries are numbered row-major: the pair {@code (i, j)} is entry {@code i * n + j}.
 *
 * <p>Thread safety: immutable.
 */
public final class CompletePattern implements AttentionPattern {

  private final int nodeCount;

  private CompletePattern(int nodeCount) {
    this.nodeCount = nodeCount;
  }

  /**
   * Returns the complete pattern on {@code nodeCount} nodes.
   *
   * @param nodeCount the number of nodes, at least 0
   * @return the pattern
   * @throws IllegalArgumentException if {@code nodeCount} is negative
   */
  public static CompletePattern of(int nodeCount) {
    if (nodeCount < 0) {
      throw new IllegalArgumentException(
          "node count must be at least 0, got " + nodeCount + "; pass the number of items");
    }
    return new CompletePattern(nodeCount);
  }

  @Override
  public int nodeCount() {
    return nodeCount;
  }

  @Override
  public long entryCount() {
    return (long) nodeCount * nodeCount;
  }

  @Override
  public int degree(int target) {
    Objects.checkIndex(target, nodeCount);
    return nodeCount;
  }

  @Override
  public boolean allows(int target, int source) {
    Objects.checkIndex(target, nodeCount);
    Objects.checkIndex(source, nodeCount);
    return true;
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof CompletePattern other && other.nodeCount == nodeCount;
  }

  @Override
  public int hashCode() {
    return Integer.hashCode(nodeCount);
  }

  @Override
  public String toString() {
    return "CompletePattern[n=" + nodeCount + "]";
  }
}
