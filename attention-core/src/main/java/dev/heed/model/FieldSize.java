package dev.heed.model;

/**
 * How much of a graph one scoring call computed over: its targets, the distinct nodes whose
 * features it read (the targets' receptive field), the attention entries it touched, summed over
 * the attention layers (per layer: {@link LayerRun#entries()}), and, for a call planned with {@link
 * KeptHubRows}, how many of those nodes had their layer outputs read from the kept rows instead of
 * computed.
 *
 * <p>Thread safety: immutable.
 *
 * @param targets distinct target nodes
 * @param nodes distinct nodes read, at least {@code targets}; the graph's node count when {@code
 *     wholeGraph}
 * @param entries attention entries touched over all attention layers ({@code n²} for a layer over
 *     the complete pattern)
 * @param wholeGraph true when the call ran every layer over every node of the graph: because every
 *     node was requested, because the graph was a complete pattern, or because a layer attends over
 *     every node (full self-attention), so that any node's output depends on all of them
 * @param keptRows distinct nodes among {@code nodes} whose outputs were read from {@link
 *     KeptHubRows} (their in-neighbours were not needed); 0 for a call without kept rows
 */
public record FieldSize(int targets, int nodes, long entries, boolean wholeGraph, int keptRows) {

  /**
   * A size without kept rows.
   *
   * @param targets distinct target nodes
   * @param nodes distinct nodes read
   * @param entries attention entries touched
   * @param wholeGraph whether every layer ran over every node
   */
  public FieldSize(int targets, int nodes, long entries, boolean wholeGraph) {
    this(targets, nodes, entries, wholeGraph, 0);
  }
}
