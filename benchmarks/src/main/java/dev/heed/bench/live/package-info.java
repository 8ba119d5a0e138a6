/**
 * JMH benchmark and memory measurement for the live graph ({@code dev.heed.live}): ingest rate with
 * concurrent snapshot readers, bytes per edge live against a compacted CSR graph, and keeping every
 * node's scores fresh after an edge insert ({@code LiveRefreshBenchmark}), and restarting a live
 * graph from a saved file against rebuilding it ({@code LiveRestartBenchmark}).
 */
package dev.heed.bench.live;
