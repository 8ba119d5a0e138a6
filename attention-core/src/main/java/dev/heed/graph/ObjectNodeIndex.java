package dev.heed.graph;

import java.util.Objects;

/**
 * A {@link NodeIndex} over object ids: an id array for index to id and an open-addressing int table
 * for id to index. Storage: about {@code 4·(2..4)·n} bytes of table plus the id references.
 * Immutable once built by {@link ObjectIdTable#freeze()}.
 */
final class ObjectNodeIndex<V> implements NodeIndex<V> {

  private final Object[] ids;
  private final int[] table;

  ObjectNodeIndex(Object[] ids, int[] table) {
    this.ids = ids;
    this.table = table;
  }

  static int find(int[] table, Object[] ids, Object id) {
    Objects.requireNonNull(id, "node id");
    int mask = table.length - 1;
    int slot = ObjectIdTable.spread(id.hashCode()) & mask;
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        return -1;
      }
      if (ids[entry - 1].equals(id)) {
        return entry - 1;
      }
      slot = (slot + 1) & mask;
    }
  }

  @Override
  public int size() {
    return ids.length;
  }

  @Override
  @SuppressWarnings("unchecked") // only V instances are ever stored
  public V idOf(int index) {
    Objects.checkIndex(index, ids.length);
    return (V) ids[index];
  }

  @Override
  public int indexOf(V id) {
    return find(table, ids, id);
  }

  @Override
  public String toString() {
    return "NodeIndex[n=" + ids.length + "]";
  }
}
