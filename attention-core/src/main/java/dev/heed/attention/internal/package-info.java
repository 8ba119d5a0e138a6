/**
 * Internal to Heed; not API, may change without notice. Arithmetic shared by the kernels of several
 * modules: the polynomial exponential ({@link dev.heed.attention.internal.FastExp}), the scans of
 * inputs for NaN and infinity, the loader of Vector API implementations, the row softmax interface
 * that the dense kernel's Vector API code implements, and the plug-in point for large matrix
 * products ({@link dev.heed.attention.internal.MatrixProduct}).
 */
package dev.heed.attention.internal;
