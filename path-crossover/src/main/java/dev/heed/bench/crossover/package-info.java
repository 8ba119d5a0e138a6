/**
 * The crossover sweep: times the dense and the sparse attention paths on seeded random graphs over
 * a grid of node counts and densities, on the user's own machine, and reports for each node count
 * the density below which the sparse path is faster. Common practice: dense attention costs grow
 * with n², sparse attention costs with the edge count, and where they cross depends on the
 * hardware.
 *
 * <p>Entry points: {@link dev.heed.bench.crossover.CrossoverRunner#main} (command line) and {@link
 * dev.heed.bench.crossover.CrossoverRunner#run} (library call with its own progress display).
 * Timing here is a careful in-process sweep, not a micro-benchmark: the JMH benchmarks in the
 * {@code benchmarks} module are the authority for precise figures.
 */
package dev.heed.bench.crossover;
