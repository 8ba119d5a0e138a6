/**
 * Synthetic graph generators for benchmarks, examples and tests: seeded, deterministic, and
 * producing primitive edge arrays that {@link dev.heed.graph.CsrGraphBuilder} turns into graphs.
 */
package dev.heed.graph.generate;
