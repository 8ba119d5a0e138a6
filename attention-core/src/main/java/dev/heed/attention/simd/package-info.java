/**
 * Vector API ({@code jdk.incubator.vector}) code of {@code attention-core}: the polynomial
 * exponential on vectors, shared with the kernel modules' vector loops, and the scan of the
 * kernels' inputs for NaN and infinity. Compiled in a separate javac pass with that module added,
 * and loaded by name only when the running JVM reads the module, so the rest of {@code
 * attention-core} runs without it. Internal, not API.
 */
package dev.heed.attention.simd;
