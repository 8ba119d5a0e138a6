package dev.heed.graph;

/**
 * Read access to each node's in-neighbour row: for a target {@code i}, the sources {@code j} with
 * an edge {@code j -> i} (the nodes {@code i} attends to), in strictly increasing order. This is
 * what scoring a few nodes needs from a graph: it walks rows outward from the targets and never
 * touches the rest. {@link CsrGraph} implements it, and so can a graph store that changes over
 * time, as long as one instance keeps answering for one fixed version of the graph.
 *
 * <p>Thread safety: implementations state theirs; those in Heed are immutable.
 */
public interface NeighbourRows {

  /**
   * Returns the number of nodes; ids run over {@code 0..n-1}.
   *
   * @return n, at least 0
   */
  int nodeCount();

  /**
   * Returns how many sources a target's row holds.
   *
   * @param target a node id in {@code 0..n-1}
   * @return the row's length
   * @throws IndexOutOfBoundsException if {@code target} is out of range
   */
  int degree(int target);

  /**
   * Copies a target's row into {@code into}, starting at {@code offset}, in increasing order.
   *
   * @param target a node id in {@code 0..n-1}
   * @param into output: receives {@link #degree(int)} source ids
   * @param offset where the first id goes
   * @return the number of ids written, {@code degree(target)}
   * @throws IndexOutOfBoundsException if {@code target} is out of range or {@code into} is too
   *     short
   */
  int copyRow(int target, int[] into, int offset);
}
