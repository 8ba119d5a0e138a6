/**
 * The CSR kernel's implementation; internal to {@code attention-sparse}, not API, and may change
 * without notice. Applications reach the kernel through {@link
 * dev.heed.sparse.CsrAttentionKernelProvider}; tests and benchmarks create variants with {@link
 * dev.heed.sparse.internal.CsrAttentionKernel#create(int, CsrKernelVariant)}.
 *
 * <p>A call runs one of three passes, chosen once per call: {@link
 * dev.heed.sparse.internal.PerHeadPass} (any score and shape), {@link
 * dev.heed.sparse.internal.ExactAllHeadsPass} (GAT scores, 8 heads × 8 dims) or {@link
 * dev.heed.sparse.internal.FactoredAllHeadsPass} (the same over a large graph's packed node table).
 * Each pass runs on one part of a {@link dev.heed.sparse.internal.RowMath}: the Vector API
 * implementation (compiled separately, in {@code dev.heed.sparse.simd}) or the plain Java one,
 * behind the same interfaces.
 */
package dev.heed.sparse.internal;
