/**
 * The dense attention path: attention computed in row blocks of the full n×n score matrix with
 * ND4J, BLAS matrix products for the score and aggregation steps, and ND4J's native softmax.
 *
 * <p>It runs every {@link dev.heed.attention.ScoreFunction} over both kinds of {@link
 * dev.heed.graph.AttentionPattern}: the complete pattern (full self-attention) and a {@link
 * dev.heed.graph.CsrGraph} used as a dense 0/1 mask. Its cost grows with n² per head whatever the
 * pattern, so it suits complete or dense patterns; sparse graphs belong on the sparse path.
 *
 * <p>The only public type is {@link dev.heed.attention.dense.DenseAttentionKernelProvider}, found
 * through {@link java.util.ServiceLoader} by {@link dev.heed.attention.AttentionKernels#forPath}.
 */
package dev.heed.attention.dense;
