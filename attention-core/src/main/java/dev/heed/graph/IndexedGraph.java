package dev.heed.graph;

import java.util.Objects;

/**
 * A graph together with the map between its node indices and the caller's own node ids.
 *
 * <p>Thread safety: immutable when the index is (every index this package builds is).
 *
 * @param graph the graph, rows are targets and columns are sources
 * @param nodes the node index: {@code nodes.idOf(i)} is the caller's id of node {@code i}
 * @param <V> the type of the caller's node ids
 */
public record IndexedGraph<V>(CsrGraph graph, NodeIndex<V> nodes) {

  /**
   * Validates that the index covers exactly the graph's nodes.
   *
   * @throws NullPointerException if either component is null
   * @throws IllegalArgumentException if the node counts differ
   */
  public IndexedGraph {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(nodes, "nodes");
    if (graph.nodeCount() != nodes.size()) {
      throw new IllegalArgumentException(
          "the node index has "
              + nodes.size()
              + " ids but the graph has "
              + graph.nodeCount()
              + " nodes; they must match");
    }
  }
}
