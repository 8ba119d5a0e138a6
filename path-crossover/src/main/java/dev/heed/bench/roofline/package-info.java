/**
 * Measures this machine's limits that bound an attention kernel, so that the benchmarks can state a
 * kernel's speed as a fraction of them (Williams, Waterman, Patterson, "Roofline: an insightful
 * visual performance model for multicore architectures", CACM 52(4), 2009).
 *
 * <ul>
 *   <li>{@link dev.heed.bench.roofline.GemmProbe}: float32 matrix-product rate through ND4J's
 *       {@code Nd4j.gemm} into a preallocated output, the ceiling of the dense path;
 *   <li>{@link dev.heed.bench.roofline.GatherProbe}: random-row gather rate (rows per second), the
 *       access pattern of sparse aggregation and the ceiling of the sparse path;
 *   <li>{@link dev.heed.bench.roofline.MachineLimits}: both, as one immutable value.
 * </ul>
 *
 * <p>These are quick in-process probes, not a calibrated benchmark suite; the C gather probe
 * ({@code benchmarks/probe/random-gather.c}, run by {@code benchmarks/sparse-vs-gather.sh}) and the
 * JMH benchmarks give more careful figures.
 */
package dev.heed.bench.roofline;
