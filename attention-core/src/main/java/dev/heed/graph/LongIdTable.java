package dev.heed.graph;

import dev.heed.attention.MemoryBudget;
import java.util.Arrays;

/**
 * A growable, insertion-ordered map from long ids to indices 0..n-1 (open addressing over an int
 * table, load at most 1/2), frozen into a {@link LongNodeIndex} when complete. Not thread safe.
 */
final class LongIdTable {

  private long[] ids;
  private int[] table; // index + 1, or 0 for an empty slot
  private int size;

  LongIdTable(int expected) {
    ids = new long[Math.max(expected, 16)];
    table = new int[ObjectIdTable.tableCapacity(Math.max(expected, 16))];
  }

  static int hash(long id) {
    long h = id * 0x9E3779B97F4A7C15L;
    return (int) (h ^ (h >>> 32));
  }

  int size() {
    return size;
  }

  long idAt(int i) {
    return ids[i];
  }

  int indexOf(long id) {
    return LongNodeIndex.find(table, ids, id);
  }

  int indexOrAdd(long id) {
    int mask = table.length - 1;
    int slot = hash(id) & mask;
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        break;
      }
      if (ids[entry - 1] == id) {
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
      int slot = hash(ids[i]) & mask;
      while (next[slot] != 0) {
        slot = (slot + 1) & mask;
      }
      next[slot] = i + 1;
    }
    table = next;
  }

  LongNodeIndex freeze() {
    long[] trimmed = ids.length == size ? ids : Arrays.copyOf(ids, size);
    LongNodeIndex index = LongNodeIndex.mapped(trimmed, table);
    ids = null;
    table = null;
    return index;
  }
}
