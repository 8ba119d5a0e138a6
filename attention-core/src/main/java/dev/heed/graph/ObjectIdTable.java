package dev.heed.graph;

import dev.heed.attention.MemoryBudget;
import java.util.Arrays;
import java.util.Objects;

/**
 * A growable, insertion-ordered map from object ids to indices 0..n-1 (open addressing over an int
 * table, load at most 1/2), frozen into an {@link ObjectNodeIndex} when complete. Not thread safe.
 */
final class ObjectIdTable<V> {

  private Object[] ids;
  private int[] table; // index + 1, or 0 for an empty slot
  private int size;

  ObjectIdTable(int expected) {
    ids = new Object[Math.max(expected, 16)];
    table = new int[tableCapacity(Math.max(expected, 16))];
  }

  static int tableCapacity(int size) {
    long cap = Long.highestOneBit(Math.max(2L * size, 2L) - 1) << 1;
    if (cap > 1 << 30) {
      throw new IllegalArgumentException("too many distinct node ids: " + size);
    }
    return (int) cap;
  }

  static int spread(int h) {
    h *= 0x9E3779B9;
    return h ^ (h >>> 16);
  }

  int size() {
    return size;
  }

  /** Returns the id of index {@code i}, which must be below {@link #size()}. */
  Object idAt(int i) {
    return ids[i];
  }

  /** Returns the index of {@code id}, or -1. */
  int indexOf(Object id) {
    return ObjectNodeIndex.find(table, ids, id);
  }

  /** Returns the index of {@code id}, adding it as the next index if it is new. */
  int indexOrAdd(V id) {
    Objects.requireNonNull(id, "node id");
    int mask = table.length - 1;
    int slot = spread(id.hashCode()) & mask;
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        break;
      }
      if (ids[entry - 1].equals(id)) {
        return entry - 1;
      }
      slot = (slot + 1) & mask;
    }
    int index = size;
    if (index == ids.length) {
      int length = (int) Math.min(Integer.MAX_VALUE - 8L, index + (index >> 1) + 16L);
      MemoryBudget.check("the node id map (" + length + " ids)", 8L * length);
      ids = Arrays.copyOf(ids, length);
    }
    ids[index] = id;
    table[slot] = index + 1;
    size++;
    if (2L * size > table.length) {
      rehash(table.length * 2);
    }
    return index;
  }

  private void rehash(int capacity) {
    if (capacity <= 0 || capacity > 1 << 30) {
      throw new IllegalArgumentException("too many distinct node ids: " + size);
    }
    int[] next = CsrAssembler.allocate("the node id map (" + size + " ids)", capacity);
    int mask = capacity - 1;
    for (int i = 0; i < size; i++) {
      int slot = spread(ids[i].hashCode()) & mask;
      while (next[slot] != 0) {
        slot = (slot + 1) & mask;
      }
      next[slot] = i + 1;
    }
    table = next;
  }

  ObjectNodeIndex<V> freeze() {
    Object[] trimmed = ids.length == size ? ids : Arrays.copyOf(ids, size);
    ObjectNodeIndex<V> index = new ObjectNodeIndex<>(trimmed, table);
    ids = null;
    table = null;
    return index;
  }
}
