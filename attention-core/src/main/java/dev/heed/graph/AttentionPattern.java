package dev.heed.graph;

/**
 * The set of allowed (target, source) pairs that attention runs over: target node {@code i} attends
 * to every source node {@code j} with {@code allows(i, j)}. Row {@code i} of the pattern is the
 * neighbourhood of {@code i}.
 *
 * <p>There are exactly two kinds of pattern, and kernels read both through this interface:
 *
 * <ul>
 *   <li>{@link CsrGraph}: an explicit, validated compressed-sparse-row graph (rows are targets,
 *       columns are sources);
 *   <li>{@link CompletePattern}: every pair, self included, with no storage. Full self-attention is
 *       attention over this pattern.
 * </ul>
 *
 * <p>Thread safety: every implementation is immutable and safe to share between threads.
 */
public sealed interface AttentionPattern permits CsrGraph, CompletePattern {

  /**
   * Returns the number of nodes {@code n}; node ids run over {@code 0..n-1}.
   *
   * @return the node count, at least 0
   */
  int nodeCount();

  /**
   * Returns the number of allowed (target, source) pairs, E.
   *
   * @return the entry count; {@code n * n} for the complete pattern
   */
  long entryCount();

  /**
   * Returns the number of sources that {@code target} attends to.
   *
   * @param target a node id in {@code 0..n-1}
   * @return the in-degree of {@code target} in this pattern
   * @throws IndexOutOfBoundsException if {@code target} is out of range
   */
  int degree(int target);

  /**
   * Returns whether {@code target} attends to {@code source}.
   *
   * @param target a node id in {@code 0..n-1}
   * @param source a node id in {@code 0..n-1}
   * @return true if the pair is allowed
   * @throws IndexOutOfBoundsException if either id is out of range
   */
  boolean allows(int target, int source);

  /**
   * Returns the density E / n², in {@code [0, 1]}; 0 for an empty pattern.
   *
   * @return the fraction of all ordered pairs that are allowed
   */
  default double density() {
    int n = nodeCount();
    return n == 0 ? 0.0 : entryCount() / ((double) n * n);
  }
}
