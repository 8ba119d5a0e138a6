/**
 * Internal to {@code attention-sparse}; not API, may change without notice. Holds the small set of
 * per-row arithmetic primitives that the CSR kernel runs on, so that the Vector API implementation
 * (compiled separately, in {@code dev.heed.sparse.simd}) and the plain Java one can implement the
 * same interface.
 */
package dev.heed.sparse.internal;
