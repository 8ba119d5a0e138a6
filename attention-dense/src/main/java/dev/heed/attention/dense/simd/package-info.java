/**
 * Vector API ({@code jdk.incubator.vector}) code of {@code attention-dense}: the row softmax of the
 * dense kernel's score blocks. Compiled in a separate javac pass with that module added, and loaded
 * by name only when the running JVM reads the module, so the rest of the module runs without it.
 * Internal, not API.
 */
package dev.heed.attention.dense.simd;
