/**
 * JMH benchmark and memory measurement for the live graph ({@code dev.heed.live}): ingest rate with
 * concurrent snapshot readers, and bytes per edge live against a compacted CSR graph.
 */
package dev.heed.bench.live;
