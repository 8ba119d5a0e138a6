/**
 * The Vector API ({@code jdk.incubator.vector}) implementation of the CSR kernel's inner loops.
 * Internal to {@code attention-sparse}, not API. This package is compiled in a separate pass with
 * {@code --add-modules jdk.incubator.vector}; the rest of the module never names it and loads it
 * reflectively, once, only when the JVM was started with that flag.
 */
package dev.heed.sparse.simd;
