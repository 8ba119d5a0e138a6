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
   * {@link #indexOf} one by one, but in stages over all keys (hash every key, then read every first
   * table slot, then every candidate id, then compare), so that the cache misses of different keys
   * overlap instead of queueing behind each other (group prefetching; Chen, Ailamaki, Gibbons,
   * Mowry, "Improving Hash Join Performance through Prefetching", ICDE 2004). A key whose first
   * slot holds another id falls back to the plain probe.
   */
  void indexOfAll(Object[] keys, int count, int[] out) {
    int[] slots = new int[count];
    int mask = table.length - 1;
    for (int k = 0; k < count; k++) {
      Object key = keys[k];
      slots[k] = key == null ? -1 : NodeIdTable.spread(key) & mask;
    }
    for (int k = 0; k < count; k++) {
      out[k] = slots[k] < 0 ? 0 : table[slots[k]];
    }
    Object[] candidates = new Object[count];
    for (int k = 0; k < count; k++) {
      int entry = out[k];
      candidates[k] = entry > 0 && entry <= size ? ids[entry - 1] : null;
    }
    for (int k = 0; k < count; k++) {
      Object key = keys[k];
      if (key == null || out[k] == 0) {
        out[k] = -1;
      } else if (candidates[k] != null && candidates[k].equals(key)) {
        out[k] -= 1;
      } else {
        out[k] = NodeIdTable.find(table, ids, size, key);
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
