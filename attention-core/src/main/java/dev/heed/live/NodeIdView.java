package dev.heed.live;

import dev.heed.graph.NodeIndex;
import java.util.Objects;

/**
 * The node ids of one snapshot: a bounded, read-only view of the live graph's id arrays (see {@link
 * NodeIdTable} for why sharing them with the writer is safe). Lookups cost O(1) expected.
 *
 * <p>Thread safety: immutable as far as callers can tell; safe to share between threads.
 */
final class NodeIdView<K> implements NodeIndex<K> {

  private final Object[] ids;
  private final int[] table;
  private final int size;

  NodeIdView(Object[] ids, int[] table, int size) {
    this.ids = ids;
    this.table = table;
    this.size = size;
  }

  @Override
  public int size() {
    return size;
  }

  @Override
  @SuppressWarnings("unchecked") // only K instances are ever stored
  public K idOf(int index) {
    Objects.checkIndex(index, size);
    return (K) ids[index];
  }

  @Override
  public int indexOf(K id) {
    Objects.requireNonNull(id, "node id");
    return NodeIdTable.find(table, ids, size, id);
  }

  /** Bytes of the shared arrays, for memory accounting. */
  long storageBytes() {
    return Layout.arrayBytes(ids.length, 4) + Layout.arrayBytes(table.length, 4);
  }

  @Override
  public String toString() {
    return "NodeIndex[n=" + size + "]";
  }
}
