package dev.heed.live;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.NodeIndex;
import java.util.Objects;

/**
 * One version of a live graph in the batch forms a full pass takes: the rows as one {@link
 * CsrGraph} (targets by sources, sorted, as {@link dev.heed.graph.CsrGraphBuilder} would build them
 * from the same edges and policies), the features as {@link NodeFeatures} (row i = node i), and the
 * map between node indices and the caller's ids. Made by {@link LiveSnapshot#compacted()}.
 *
 * <p>Thread safety: immutable.
 *
 * @param version the snapshot version these came from
 * @param graph the in-neighbour rows, n nodes
 * @param features the features, n × f
 * @param nodes the node index, n ids
 * @param <K> the type of the caller's node ids
 */
public record CompactedSnapshot<K>(
    long version, CsrGraph graph, NodeFeatures features, NodeIndex<K> nodes) {

  /**
   * Checks that the parts agree.
   *
   * @throws NullPointerException if a part is null
   * @throws IllegalArgumentException if the node counts differ
   */
  public CompactedSnapshot {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(nodes, "nodes");
    if (graph.nodeCount() != features.nodeCount() || graph.nodeCount() != nodes.size()) {
      throw new IllegalArgumentException(
          "graph, features and node index must have the same node count, got "
              + graph.nodeCount()
              + ", "
              + features.nodeCount()
              + " and "
              + nodes.size());
    }
  }

  /**
   * Returns the graph with its node index.
   *
   * @return the indexed graph
   */
  public IndexedGraph<K> indexedGraph() {
    return new IndexedGraph<>(graph, nodes);
  }
}
