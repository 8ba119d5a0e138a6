/**
 * Internal to Heed; not API, may change without notice. Arithmetic shared by the kernels of several
 * modules: the polynomial exponential ({@link dev.heed.attention.internal.FastExp}) and the row
 * softmax interface that the dense kernel's Vector API code (compiled separately, in {@code
 * dev.heed.attention.simd}) implements.
 */
package dev.heed.attention.internal;
