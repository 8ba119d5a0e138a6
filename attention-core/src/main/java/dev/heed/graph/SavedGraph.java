package dev.heed.graph;

import dev.heed.classify.NodeFeatures;
import java.util.Objects;

/**
 * A graph with its node ids and features as {@link SavedGraphFile} writes and reads them: what a
 * service needs to score again after a restart without rebuilding from its edge list.
 *
 * <p>Thread safety: immutable.
 *
 * @param graph the rows and the node index, n nodes
 * @param features the features, n × f
 * @param version the version it was taken at (a live graph's snapshot version), or 0
 * @param <K> the type of the node ids ({@code String} or {@code Long})
 */
public record SavedGraph<K>(IndexedGraph<K> graph, NodeFeatures features, long version) {

  /**
   * Checks that the parts agree.
   *
   * @throws NullPointerException if a part is null
   * @throws IllegalArgumentException if the node counts differ or the version is negative
   */
  public SavedGraph {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    if (graph.graph().nodeCount() != features.nodeCount()) {
      throw new IllegalArgumentException(
          "the graph has "
              + graph.graph().nodeCount()
              + " nodes but the features have "
              + features.nodeCount()
              + " rows");
    }
    if (version < 0) {
      throw new IllegalArgumentException("version must be at least 0, got " + version);
    }
  }
}
