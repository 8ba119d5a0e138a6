/**
 * A graph with node features that services change while they read it: {@link
 * dev.heed.live.VersionedGraph} takes nodes (by the caller's own ids), edges and features in atomic
 * {@link dev.heed.live.UpdateBatch batches} from any thread, reports what each batch changed
 * ({@link dev.heed.live.BatchResult}), and hands out immutable, versioned {@link
 * dev.heed.live.LiveSnapshot snapshots} in O(1) that scoring code reads through {@link
 * dev.heed.graph.NeighbourRows} and {@link dev.heed.classify.FeatureRows}, or turns into a {@link
 * dev.heed.graph.CsrGraph} and {@link dev.heed.classify.NodeFeatures} for a full pass ({@link
 * dev.heed.live.CompactedSnapshot}). Changes are kept as small per-row deltas over a base CSR and
 * folded into a new base by compaction, in the background or on request, without blocking readers.
 */
package dev.heed.live;
