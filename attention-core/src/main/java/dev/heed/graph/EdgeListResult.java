package dev.heed.graph;

import java.util.Objects;

/**
 * The outcome of reading an edge-list file: the graph, the map between node indices and the file's
 * ids, and what a lenient read skipped.
 *
 * <p>Thread safety: immutable.
 *
 * @param graph the graph; rows are targets, columns are sources
 * @param nodes the node index: {@code nodes.idOf(i)} is the file's id of node {@code i}
 * @param edgeLines the number of lines read as edges
 * @param skipped the malformed lines skipped in lenient mode ({@link SkippedLines#NONE} otherwise)
 * @param <V> the id type: {@code String} or {@code Long}
 */
public record EdgeListResult<V>(
    CsrGraph graph, NodeIndex<V> nodes, long edgeLines, SkippedLines skipped) {

  /**
   * Validates the components.
   *
   * @throws NullPointerException if a component is null
   * @throws IllegalArgumentException if the index does not cover exactly the graph's nodes
   */
  public EdgeListResult {
    Objects.requireNonNull(skipped, "skipped");
    new IndexedGraph<>(graph, nodes); // validates graph and index together
  }

  /**
   * Returns the graph with its node index.
   *
   * @return the indexed graph
   */
  public IndexedGraph<V> indexed() {
    return new IndexedGraph<>(graph, nodes);
  }
}
