package dev.heed.graph;

/**
 * Whether a graph builder keeps edge direction or treats every edge as undirected.
 *
 * <p>Thread safety: enum constants are immutable.
 */
public enum DirectionPolicy {
  /** An edge {@code j -> i} makes {@code i} attend to {@code j} only. */
  KEEP,
  /**
   * Every edge is undirected: an edge {@code j -> i} makes {@code i} attend to {@code j} and {@code
   * j} attend to {@code i}. Under {@link DuplicatePolicy#REJECT}, giving both {@code j -> i} and
   * {@code i -> j} gives the same undirected tie twice and is rejected.
   */
  SYMMETRISE
}
