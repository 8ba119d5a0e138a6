/**
 * Small, readable programs that show how to use Heed; copy from them.
 *
 * <ul>
 *   <li>{@link dev.heed.examples.ClassifyJGraphTGraph}: classify a JGraphT graph, by your own
 *       vertex ids.
 *   <li>{@link dev.heed.examples.ScoringService}: a JSON scoring service on the JDK's HTTP server.
 *   <li>{@link dev.heed.examples.SelfAttentionVersusGraphAttention}: full self-attention versus
 *       attention over a sparse graph.
 * </ul>
 *
 * <p>See {@code examples/README.md} for how to run them.
 */
package dev.heed.examples;
