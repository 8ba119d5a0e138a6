package dev.heed.classify;

/**
 * A neighbour and the attention weight a node gave it in one layer (one head, or the mean over
 * heads).
 *
 * <p>Thread safety: immutable.
 *
 * @param node the neighbour's node id
 * @param weight the attention weight α, in [0, 1]
 */
public record NeighbourWeight(int node, float weight) {}
