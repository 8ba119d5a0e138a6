package dev.heed.sparse.internal;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;

/**
 * The arguments of one CSR kernel call, after the kernel's front door has checked them (see {@code
 * AttentionKernel#attend} for their shapes and roles). The arrays are the caller's own, not copies.
 *
 * <p>With a node layout ({@link dev.heed.graph.NodeLayout}), {@code pattern} is the layout's
 * renumbered rows and {@code nodeAt} the node at each position: row p is node {@code nodeAt[p]}'s,
 * its sources are positions, and the query, key, value and output arrays stay indexed by node.
 *
 * <p>Thread safety: the record is immutable; the arrays are shared with the caller.
 */
record CsrCall(
    AttentionPattern pattern,
    ScoreFunction score,
    HeadShape shape,
    float[] query,
    float[] key,
    float[] value,
    float[] out,
    float[] weights,
    int[] nodeAt) {

  /** A call without a node layout: rows and sources are node ids. */
  CsrCall(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights) {
    this(pattern, score, shape, query, key, value, out, weights, null);
  }
}
