/**
 * Graphs and attention patterns: the immutable CSR graph every kernel reads, the storage-free
 * complete pattern, and the ways to build them (arrays, JGraphT graphs, edge-list files).
 */
package dev.heed.graph;
