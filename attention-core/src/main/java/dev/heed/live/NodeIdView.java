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

  /**
   * Looks up {@code keys[0..count-1]} (null entries give -1) into {@code out}. The same answers as
   * {@link #indexOf} one by one, but in stages over all keys (hash every key, then probe the table
   * for every key, then read every candidate id, then compare), so that the cache misses of
   * different keys overlap instead of queueing behind each other (group prefetching; Chen,
   * Ailamaki, Gibbons, Mowry, "Improving Hash Join Performance through Prefetching", ICDE 2004). A
   * key whose candidate is another id (hash bits alike) falls back to the plain lookup.
   */
  void indexOfAll(Object[] keys, int count, int[] out) {
    int[] hashes = new int[count];
    for (int k = 0; k < count; k++) {
      Object key = keys[k];
      hashes[k] = key == null ? 0 : NodeIdTable.spread(key);
    }
    int mask = table.length - 1;
    for (int k = 0; k < count; k++) {
      int slot = keys[k] == null ? -1 : NodeIdTable.probe(table, hashes[k], hashes[k] & mask);
      out[k] = slot < 0 ? -1 : NodeIdTable.indexAt(table, slot);
    }
    Object[] candidates = new Object[count];
    for (int k = 0; k < count; k++) {
      candidates[k] = out[k] >= 0 && out[k] < size ? ids[out[k]] : null;
    }
    for (int k = 0; k < count; k++) {
      if (out[k] >= 0 && (candidates[k] == null || !candidates[k].equals(keys[k]))) {
        out[k] = NodeIdTable.find(table, ids, size, keys[k]);
      }
    }
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
