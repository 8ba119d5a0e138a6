package dev.heed.graph;

import java.util.Arrays;
import java.util.Objects;

/**
 * A renumbering of a graph's nodes for memory locality ({@link LocalityOrder}), made once by {@link
 * CsrGraph#withLocalityOrder}: the node at each position, and the graph's rows in position order
 * with their sources given as positions. {@code NodeClassifier} runs a whole-graph model pass over
 * the renumbered rows, with every per-node array (features, projections, layer outputs) in position
 * order, and returns each prediction at the node's own id; callers never see positions.
 *
 * <p>Memory: {@code 8·n} bytes for the order and its inverse, {@code 4·(n + 1) + 4·E} for the
 * renumbered rows.
 *
 * <p>Thread safety: immutable; safe to share between threads.
 */
public final class NodeLayout {

  private final LocalityOrder method;
  private final int[] nodeAt;
  private final int[] positionOf;
  private final CsrGraph rows;

  private NodeLayout(LocalityOrder method, int[] nodeAt, int[] positionOf, CsrGraph rows) {
    this.method = method;
    this.nodeAt = nodeAt;
    this.positionOf = positionOf;
    this.rows = rows;
  }

  /**
   * Computes the layout of a graph: O(n + E) plus the order's own cost and sorting each renumbered
   * row.
   */
  static NodeLayout of(CsrGraph graph, LocalityOrder method) {
    Objects.requireNonNull(method, "method");
    int n = graph.nodeCount();
    int[] nodeAt = method.order(graph);
    int[] positionOf = new int[n];
    for (int p = 0; p < n; p++) {
      positionOf[nodeAt[p]] = p;
    }
    int[] offsets = new int[n + 1];
    int[] columns = new int[graph.edgeCount()];
    for (int p = 0; p < n; p++) {
      int node = nodeAt[p];
      int at = offsets[p];
      for (int e = graph.rowStart(node), end = graph.rowEnd(node); e < end; e++) {
        columns[at++] = positionOf[graph.column(e)];
      }
      // sorted rows: the CSR invariant, and sources read in increasing address order
      Arrays.sort(columns, offsets[p], at);
      offsets[p + 1] = at;
    }
    return new NodeLayout(method, nodeAt, positionOf, CsrGraph.adopt(offsets, columns));
  }

  /**
   * Returns the order this layout was made with.
   *
   * @return the method
   */
  public LocalityOrder method() {
    return method;
  }

  /**
   * Returns the node placed at a position.
   *
   * @param position in {@code 0..n-1}
   * @return the node's id in the graph
   */
  public int node(int position) {
    return nodeAt[position];
  }

  /**
   * Returns the position of a node.
   *
   * @param node in {@code 0..n-1}
   * @return its position in the layout
   */
  public int position(int node) {
    return positionOf[node];
  }

  /**
   * Returns a copy of the order: entry p is the node at position p.
   *
   * @return a new array of n node ids, a permutation of {@code 0..n-1}
   */
  public int[] nodes() {
    return nodeAt.clone();
  }

  /**
   * Returns the graph's rows in position order, their sources given as positions: row p of the
   * result is row {@code node(p)} of the graph, renumbered and sorted.
   *
   * @return the renumbered rows (n nodes, the same entry count)
   */
  public CsrGraph rows() {
    return rows;
  }

  @Override
  public String toString() {
    return "NodeLayout[" + method + ", n=" + nodeAt.length + "]";
  }
}
