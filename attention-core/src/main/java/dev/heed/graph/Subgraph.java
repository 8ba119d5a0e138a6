package dev.heed.graph;

import java.util.Arrays;
import java.util.Objects;

/**
 * A subgraph with the map between its local node ids {@code 0..k-1} and the original graph's node
 * ids. Local ids follow the original order: local {@code a < b} exactly when {@code originalId(a) <
 * originalId(b)}.
 *
 * <p>Thread safety: immutable.
 */
public final class Subgraph {

  private final CsrGraph graph;
  private final int[] originalIds; // sorted, distinct

  Subgraph(CsrGraph graph, int[] originalIds) {
    assert graph.nodeCount() == originalIds.length;
    this.graph = graph;
    this.originalIds = originalIds;
  }

  /**
   * Returns the subgraph over local ids.
   *
   * @return the graph on {@code 0..k-1}
   */
  public CsrGraph graph() {
    return graph;
  }

  /**
   * Returns the number of nodes k.
   *
   * @return k
   */
  public int nodeCount() {
    return originalIds.length;
  }

  /**
   * Returns the original id of a local node.
   *
   * @param local a local id in {@code 0..k-1}
   * @return the node's id in the original graph
   * @throws IndexOutOfBoundsException if {@code local} is out of range
   */
  public int originalId(int local) {
    Objects.checkIndex(local, originalIds.length);
    return originalIds[local];
  }

  /**
   * Returns the local id of an original node, or -1 if it is not in the subgraph. O(log k).
   *
   * @param original a node id of the original graph
   * @return the local id, or -1
   */
  public int localId(int original) {
    int at = Arrays.binarySearch(originalIds, original);
    return at >= 0 ? at : -1;
  }

  /**
   * Returns a copy of the original ids, indexed by local id.
   *
   * @return a new sorted array of length k
   */
  public int[] originalIds() {
    return originalIds.clone();
  }

  @Override
  public String toString() {
    return "Subgraph[k=" + originalIds.length + ", E=" + graph.edgeCount() + "]";
  }
}
