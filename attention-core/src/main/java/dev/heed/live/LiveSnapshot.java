package dev.heed.live;

import dev.heed.classify.FeatureRows;
import dev.heed.classify.NodeFeatures;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.NeighbourRows;
import dev.heed.graph.NodeIndex;
import dev.heed.graph.SavedGraphFile;
import java.io.IOException;
import java.nio.file.Path;
import java.util.Objects;

/**
 * One version of a {@link VersionedGraph}: its nodes, in-neighbour rows and features as they were
 * after a given batch, unchanged for as long as the snapshot is held, whatever writers and
 * compaction do meanwhile. Scoring code reads it through {@link NeighbourRows} and {@link
 * FeatureRows}; a result can quote {@link #version()} to say which graph it saw.
 *
 * <p>Node indices run over {@code 0..nodeCount()-1} in the order the nodes were added, and a node
 * keeps its index for the life of the graph (nodes are never removed), so an index from an older
 * snapshot means the same node in a newer one. {@link #nodes()} maps indices to the caller's ids.
 *
 * <p>Layout: a base CSR graph (the rows as of the last compaction) and, per changed row, a small
 * sorted delta over it (sources added and removed), held in a persistent trie; features likewise, a
 * base matrix plus replaced rows. Costs: {@link #degree} O(1) plus a trie lookup (at most 7
 * references, 4 for a million nodes); {@link #copyRow(int, int[], int)} O(degree + delta); {@link
 * #hasEdge} O(log degree + log delta); a feature row O(f).
 *
 * <p>Thread safety: immutable; safe to share between threads. Holding a snapshot keeps its base and
 * deltas in memory even after the graph has compacted past them.
 *
 * @param <K> the type of the caller's node ids
 */
public final class LiveSnapshot<K> implements NeighbourRows, FeatureRows {

  final long version;
  final int nodeCount;
  final long edgeCount;
  final CsrGraph base; // rows of nodes 0..base.nodeCount()-1 as of the last compaction
  final SlotTrie rowDeltas; // a delta per changed row, see RowDeltas
  final long deltaEntries; // sum of added plus removed over all deltas
  final long deltaRowBytes; // bytes of the delta arrays
  final NodeFeatures baseFeatures; // base.nodeCount() rows; a missing row is zeros
  final long[] baseMissing; // bit per base node without features; null when none is missing
  final SlotTrie featureRows; // float[] per node whose features are newer than the base
  final long featureRowBytes; // bytes of the rows in featureRows
  final int missingFeatures; // nodes without features, over all nodes
  final NodeIdView<K> ids;

  LiveSnapshot(
      long version,
      int nodeCount,
      long edgeCount,
      CsrGraph base,
      SlotTrie rowDeltas,
      long deltaEntries,
      long deltaRowBytes,
      NodeFeatures baseFeatures,
      long[] baseMissing,
      SlotTrie featureRows,
      long featureRowBytes,
      int missingFeatures,
      NodeIdView<K> ids) {
    this.version = version;
    this.nodeCount = nodeCount;
    this.edgeCount = edgeCount;
    this.base = base;
    this.rowDeltas = rowDeltas;
    this.deltaEntries = deltaEntries;
    this.deltaRowBytes = deltaRowBytes;
    this.baseFeatures = baseFeatures;
    this.baseMissing = baseMissing;
    this.featureRows = featureRows;
    this.featureRowBytes = featureRowBytes;
    this.missingFeatures = missingFeatures;
    this.ids = ids;
  }

  /**
   * Returns this snapshot's version: 0 for the empty graph (or, for a graph {@link
   * VersionedGraph.Builder#restore restored} from a saved one, the saved version plus one), then
   * one more for every batch applied successfully. Compaction does not change the version (the
   * graph it describes is the same), so two snapshots with the same version of one graph hold the
   * same nodes, rows and features.
   *
   * @return the version, at least 0
   */
  public long version() {
    return version;
  }

  @Override
  public int nodeCount() {
    return nodeCount;
  }

  /**
   * Returns the number of row entries E over all rows (edges as stored: a symmetrised edge counts
   * twice, a self-loop once).
   *
   * @return E, at least 0
   */
  public long edgeCount() {
    return edgeCount;
  }

  /**
   * Returns the number of features per node, fixed for the graph.
   *
   * @return f, at least 1
   */
  @Override
  public int featureCount() {
    return baseFeatures.featureCount();
  }

  @Override
  public int degree(int target) {
    Objects.checkIndex(target, nodeCount);
    return RowDeltas.degree(baseDegree(target), rowDeltas.get(target));
  }

  @Override
  public int copyRow(int target, int[] into, int offset) {
    Objects.checkIndex(target, nodeCount);
    Object delta = rowDeltas.get(target);
    if (delta == null) {
      return target < base.nodeCount() ? base.copyRow(target, into, offset) : 0;
    }
    int start = target < base.nodeCount() ? base.rowStart(target) : 0;
    int end = target < base.nodeCount() ? base.rowEnd(target) : 0;
    Objects.checkFromIndexSize(offset, RowDeltas.degree(end - start, delta), into.length);
    return RowDeltas.merge(base, start, end, delta, into, offset);
  }

  /**
   * Returns whether the row of {@code target} holds {@code source}, that is, whether {@code target}
   * attends to {@code source}.
   *
   * @param source a node index in {@code 0..n-1}
   * @param target a node index in {@code 0..n-1}
   * @return true if the edge {@code source -> target} is present
   * @throws IndexOutOfBoundsException if an index is out of range
   */
  public boolean hasEdge(int source, int target) {
    Objects.checkIndex(source, nodeCount);
    Objects.checkIndex(target, nodeCount);
    Object delta = rowDeltas.get(target);
    if (RowDeltas.isAdded(delta, source)) {
      return true;
    }
    return !RowDeltas.isRemoved(delta, source) && RowDeltas.baseHas(base, target, source);
  }

  /**
   * Returns whether a node has features, which it needs before it can be scored.
   *
   * @param node a node index in {@code 0..n-1}
   * @return true if its features were set
   * @throws IndexOutOfBoundsException if {@code node} is out of range
   */
  public boolean hasFeatures(int node) {
    Objects.checkIndex(node, nodeCount);
    return featureRows.get(node) != null || inBaseFeatures(node);
  }

  /**
   * Returns how many nodes have no features yet. O(1).
   *
   * @return the count, 0 when every node can be scored
   */
  public int missingFeatureCount() {
    return missingFeatures;
  }

  /**
   * Copies a node's features.
   *
   * @param node a node index in {@code 0..n-1}
   * @param into output: receives {@link #featureCount()} values
   * @param offset where the first value goes
   * @throws IndexOutOfBoundsException if {@code node} is out of range or {@code into} is too short
   * @throws MissingFeaturesException if the node has no features yet (naming its id)
   */
  @Override
  public void copyRow(int node, float[] into, int offset) {
    Objects.checkIndex(node, nodeCount);
    float[] row = (float[]) featureRows.get(node);
    if (row != null) {
      Objects.checkFromIndexSize(offset, row.length, into.length);
      System.arraycopy(row, 0, into, offset, row.length);
    } else if (inBaseFeatures(node)) {
      baseFeatures.copyRow(node, into, offset);
    } else {
      throw missing(node);
    }
  }

  /**
   * Returns the map between node indices and the caller's ids, as of this snapshot.
   *
   * @return the node index, of size {@link #nodeCount()}; immutable
   */
  public NodeIndex<K> nodes() {
    return ids;
  }

  /**
   * Returns whether this snapshot is one compacted CSR (no deltas on rows or features), so that
   * {@link #compacted()} and {@link #toIndexedGraph()} cost O(1).
   *
   * @return true when nothing changed since the last compaction
   */
  public boolean isCompact() {
    return rowDeltas.isEmpty() && featureRows.isEmpty() && base.nodeCount() == nodeCount;
  }

  /**
   * Returns this version's graph as one {@link CsrGraph} with its id map, for a full pass (features
   * not needed). O(1) when {@link #isCompact()}; otherwise O(n + E) time and about twice the
   * finished graph's memory while it is built. The live graph is not changed.
   *
   * @return the graph and its node index
   */
  public IndexedGraph<K> toIndexedGraph() {
    return new IndexedGraph<>(Compaction.graphOf(this), ids);
  }

  /**
   * Returns this version's graph, features and id map in their compact batch forms, for a full
   * pass. O(1) when {@link #isCompact()} and every node has features; otherwise O(n·f + n + E) time
   * and about twice the finished arrays' memory while they are built. The live graph is not
   * changed.
   *
   * @return the graph, features and node index of this version
   * @throws MissingFeaturesException if a node has no features (naming the first such node); check
   *     {@link #missingFeatureCount()} first, or use {@link #toIndexedGraph()}
   */
  public CompactedSnapshot<K> compacted() {
    if (missingFeatures > 0) {
      for (int node = 0; node < nodeCount; node++) {
        if (!hasFeatures(node)) {
          throw missing(node);
        }
      }
    }
    return new CompactedSnapshot<>(
        version, Compaction.graphOf(this), Compaction.featuresOf(this), ids);
  }

  /**
   * Saves this version (rows, ids, features and version) to {@code file} with {@link
   * SavedGraphFile#write}: crash-safe (a temporary file renamed over the target), checked by
   * CRC-32C when read. Restart with {@link SavedGraphFile#readStringIds} (or {@link
   * SavedGraphFile#readLongIds}) and {@link VersionedGraph.Builder#restore}, built with this
   * graph's policies (the file does not record them). Cost: {@link #compacted()}'s, then one
   * sequential write; the live graph is not changed.
   *
   * @param file the file to write or replace; its folder must exist
   * @throws IOException if writing fails (the file is then unchanged)
   * @throws MissingFeaturesException if a node has no features yet (the file holds a row for every
   *     node)
   * @throws IllegalArgumentException if the ids are neither all {@code String} nor all {@code Long}
   */
  public void saveTo(Path file) throws IOException {
    CompactedSnapshot<K> whole = compacted();
    SavedGraphFile.write(file, whole.indexedGraph(), whole.features(), version);
  }

  /**
   * Returns the memory this snapshot's structures hold, counted from array lengths. O(1).
   *
   * @return the byte counts
   */
  public LiveMemory memory() {
    long baseFeatureBytes =
        Layout.arrayBytes((long) baseFeatures.nodeCount() * baseFeatures.featureCount(), 4)
            + (baseMissing == null ? 0 : Layout.arrayBytes(baseMissing.length, 8));
    return new LiveMemory(
        nodeCount,
        edgeCount,
        base.storageBytes(),
        deltaEntries,
        deltaRowBytes + SlotTrie.NODE_BYTES * rowDeltas.nodeCount(),
        baseFeatureBytes,
        featureRowBytes + SlotTrie.NODE_BYTES * featureRows.nodeCount(),
        ids.storageBytes());
  }

  @Override
  public String toString() {
    return "LiveSnapshot[version="
        + version
        + ", n="
        + nodeCount
        + ", E="
        + edgeCount
        + ", delta entries="
        + deltaEntries
        + "]";
  }

  int baseDegree(int target) {
    return target < base.nodeCount() ? base.rowEnd(target) - base.rowStart(target) : 0;
  }

  /**
   * The node's current feature row, or null when it has none: the shared array for a row set since
   * the last compaction, a copy for a base row. Callers never modify it.
   */
  float[] featureRowOrNull(int node) {
    float[] row = (float[]) featureRows.get(node);
    if (row == null && inBaseFeatures(node)) {
      row = new float[baseFeatures.featureCount()];
      baseFeatures.copyRow(node, row, 0);
    }
    return row;
  }

  private boolean inBaseFeatures(int node) {
    return node < baseFeatures.nodeCount()
        && (baseMissing == null || (baseMissing[node >>> 6] & (1L << node)) == 0);
  }

  private MissingFeaturesException missing(int node) {
    return new MissingFeaturesException(
        "node '"
            + ids.idOf(node)
            + "' (index "
            + node
            + ", snapshot version "
            + version
            + ") has no features yet, so it cannot be scored; set them with"
            + " UpdateBatch.setFeatures or addNode(id, features) ("
            + missingFeatures
            + " of "
            + nodeCount
            + " nodes lack features)",
        node);
  }
}
