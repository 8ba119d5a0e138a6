package dev.heed.sparse.internal;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;

/**
 * The arguments of one CSR kernel call, after the kernel's front door has checked them (see {@code
 * AttentionKernel#attend} for their shapes and roles). The arrays are the caller's own, not copies.
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
    float[] weights) {}
