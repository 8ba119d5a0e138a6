package dev.heed.graph;

/**
 * What a graph builder does when the same edge is given more than once. The built graph never has
 * duplicate entries; this only chooses between merging them and failing.
 *
 * <p>Thread safety: enum constants are immutable.
 */
public enum DuplicatePolicy {
  /** Repeated edges are merged into one entry, silently (multigraphs become simple graphs). */
  MERGE,
  /**
   * A repeated edge fails the build with an {@link IllegalArgumentException} that names the edge
   * and where its first two copies were given (array index, file line or JGraphT edge).
   */
  REJECT
}
