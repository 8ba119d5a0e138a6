package dev.heed.graph;

/**
 * A replayable stream of edges as node indices, read by {@link CsrAssembler} in two passes (count,
 * then fill) and, on a rejected duplicate, a third time to find where the copies were given. Every
 * pass must produce the same edges in the same order.
 */
interface EdgeSource {

  /**
   * Receives one edge {@code source -> target}, given at {@code position} (index, line, ordinal).
   */
  @FunctionalInterface
  interface Visitor {
    void edge(long position, int source, int target);
  }

  /** Streams every edge once, in a fixed order. */
  void forEachEdge(Visitor visitor);

  /** The node count; valid after the first complete pass. */
  int nodeCount();

  /** Describes where an edge was given, e.g. "sources[3]/targets[3]" or "line 17 of g.csv". */
  String describePosition(long position);

  /** Describes a node for messages, by the caller's own id where there is one. */
  String describeNode(int index);
}
