package dev.heed.graph;

/**
 * What a graph builder does with self-loops (entries {@code i -> i}).
 *
 * <p>Thread safety: enum constants are immutable.
 */
public enum SelfLoopPolicy {
  /**
   * Every node attends to itself: the built graph has exactly one self-loop per node, whether or
   * not the input had one (the GAT convention, Veličković et al. 2018: N(i) includes i). A
   * self-loop present in the input is kept once and never counts as a duplicate of the added one.
   */
  ADD,
  /**
   * Self-loops appear only where the input has them, once each (a self-loop given twice is a
   * duplicate edge, handled by the {@link DuplicatePolicy}).
   */
  AS_GIVEN
}
