package dev.heed.graph;

import java.util.NoSuchElementException;

/**
 * A one-to-one map between the caller's node ids (vertices of a JGraphT graph, ids in an edge-list
 * file) and the graph's node indices {@code 0..n-1}, in both directions.
 *
 * <p>Thread safety: every implementation is immutable and safe to share between threads.
 *
 * @param <V> the type of the caller's node ids
 */
public interface NodeIndex<V> {

  /**
   * Returns the number of nodes n.
   *
   * @return n, at least 0
   */
  int size();

  /**
   * Returns the caller's id of node {@code index}.
   *
   * @param index a node index in {@code 0..n-1}
   * @return the id, never null
   * @throws IndexOutOfBoundsException if {@code index} is out of range
   */
  V idOf(int index);

  /**
   * Returns the node index of {@code id}, or -1 if the id is not a node. O(1) expected.
   *
   * @param id the caller's id, not null
   * @return the index in {@code 0..n-1}, or -1
   * @throws NullPointerException if {@code id} is null
   */
  int indexOf(V id);

  /**
   * Returns whether {@code id} is a node.
   *
   * @param id the caller's id, not null
   * @return true if {@link #indexOf} would return an index
   * @throws NullPointerException if {@code id} is null
   */
  default boolean contains(V id) {
    return indexOf(id) >= 0;
  }

  /**
   * Returns the node index of {@code id}, failing if it is not a node.
   *
   * @param id the caller's id, not null
   * @return the index in {@code 0..n-1}
   * @throws NoSuchElementException naming the id if it is not a node
   * @throws NullPointerException if {@code id} is null
   */
  default int requireIndexOf(V id) {
    int index = indexOf(id);
    if (index < 0) {
      throw new NoSuchElementException(
          "no node with id '" + id + "' (the graph has " + size() + " nodes)");
    }
    return index;
  }
}
