/**
 * JMH benchmarks and the memory measurement for building graphs (arrays, edge-list files, R-MAT).
 */
package dev.heed.bench.graph;
