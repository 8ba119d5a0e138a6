package dev.heed.model;

/**
 * How much of a graph one scoring call computed over: its targets, the distinct nodes whose
 * features it read (the targets' receptive field), and the attention entries it touched, summed
 * over the attention layers (per layer: {@link LayerRun#entries()}).
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
 */
public record FieldSize(int targets, int nodes, long entries, boolean wholeGraph) {}
