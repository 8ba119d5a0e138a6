package dev.heed.graph;

import java.util.Objects;
import org.jgrapht.Graph;
import org.jgrapht.graph.DefaultDirectedGraph;
import org.jgrapht.graph.DefaultEdge;
import org.jgrapht.graph.SimpleGraph;

/**
 * Converts CSR graphs back into JGraphT graphs, for round trips and for JGraphT's algorithms. An
 * entry in row {@code i}, column {@code j} ({@code i} attends to {@code j}) becomes the directed
 * edge {@code j -> i}. Vertices are added in node order {@code 0..n-1}.
 *
 * <p>Thread safety: stateless; the returned graphs are new, mutable JGraphT graphs owned by the
 * caller.
 */
public final class JGraphTExport {

  private JGraphTExport() {}

  /**
   * Returns a new directed JGraphT graph with vertices {@code 0..n-1} and one edge {@code j -> i}
   * per entry (self-loops included). O(n + E).
   *
   * @param graph input, not modified
   * @return a new {@link DefaultDirectedGraph}
   * @throws NullPointerException if {@code graph} is null
   */
  public static Graph<Integer, DefaultEdge> toDirected(CsrGraph graph) {
    Objects.requireNonNull(graph, "graph");
    Graph<Integer, DefaultEdge> out = new DefaultDirectedGraph<>(DefaultEdge.class);
    int n = graph.nodeCount();
    Integer[] vertices = new Integer[n];
    for (int i = 0; i < n; i++) {
      vertices[i] = i;
      out.addVertex(vertices[i]);
    }
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        out.addEdge(vertices[graph.column(e)], vertices[i]);
      }
    }
    return out;
  }

  /**
   * Returns a new directed JGraphT graph over the caller's own ids: node {@code i} becomes vertex
   * {@code nodes().idOf(i)}, and each entry the edge {@code idOf(j) -> idOf(i)}. O(n + E).
   *
   * @param indexed input, not modified
   * @param <V> the id type
   * @return a new {@link DefaultDirectedGraph}
   * @throws NullPointerException if {@code indexed} is null
   */
  public static <V> Graph<V, DefaultEdge> toDirected(IndexedGraph<V> indexed) {
    Objects.requireNonNull(indexed, "indexed");
    CsrGraph graph = indexed.graph();
    NodeIndex<V> nodes = indexed.nodes();
    Graph<V, DefaultEdge> out = new DefaultDirectedGraph<>(DefaultEdge.class);
    for (int i = 0; i < graph.nodeCount(); i++) {
      out.addVertex(nodes.idOf(i));
    }
    for (int i = 0; i < graph.nodeCount(); i++) {
      V target = nodes.idOf(i);
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        out.addEdge(nodes.idOf(graph.column(e)), target);
      }
    }
    return out;
  }

  /**
   * Returns a new undirected simple JGraphT graph with vertices {@code 0..n-1} and one edge {@code
   * {i, j}} per symmetric pair of entries. Self-loops are dropped (a {@link SimpleGraph} has none).
   * O(E log d) for the symmetry check.
   *
   * @param graph input, not modified; must be symmetric (built with {@link
   *     DirectionPolicy#SYMMETRISE} or from an undirected graph)
   * @return a new {@link SimpleGraph}
   * @throws IllegalArgumentException naming the entry if {@code graph} is not symmetric
   * @throws NullPointerException if {@code graph} is null
   */
  public static Graph<Integer, DefaultEdge> toUndirected(CsrGraph graph) {
    Objects.requireNonNull(graph, "graph");
    Graph<Integer, DefaultEdge> out = new SimpleGraph<>(DefaultEdge.class);
    int n = graph.nodeCount();
    Integer[] vertices = new Integer[n];
    for (int i = 0; i < n; i++) {
      vertices[i] = i;
      out.addVertex(vertices[i]);
    }
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        int j = graph.column(e);
        if (graph.entryOf(j, i) < 0) {
          throw new IllegalArgumentException(
              "the graph is not symmetric: row "
                  + i
                  + " has column "
                  + j
                  + " (entry "
                  + e
                  + ") but row "
                  + j
                  + " has no column "
                  + i
                  + "; export it with toDirected, or build it with DirectionPolicy.SYMMETRISE");
        }
        if (j < i) {
          out.addEdge(vertices[j], vertices[i]);
        }
      }
    }
    return out;
  }
}
