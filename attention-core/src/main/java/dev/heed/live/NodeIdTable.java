package dev.heed.live;

import java.util.Arrays;

/**
 * The live graph's map from the caller's node ids to node indices: an append-only id array (index
 * to id) and an open-addressing {@code int[]} table at load at most 1/2 (linear probing). A table
 * of capacity {@code 2^b} keeps in each filled slot the index + 1 in its low {@code b} bits (it is
 * at most {@code 2^(b-1)}) and, in the {@code 32 - b} bits above, the top bits of the id's spread
 * hash, which the slot number does not use; 0 is an empty slot. A probe passes over slots whose
 * hash bits differ without reading their ids, so a lookup reads the id array and an id object about
 * once (the tag, common practice in open-addressing tables); with a million nodes, 11 bits tell
 * 2047 of 2048 other ids apart. Only the writer holding the graph's write lock changes it, and only
 * by appending: an index, once given, keeps its id for the life of the graph, and a table slot,
 * once filled, is never changed. {@link #view()} hands readers the arrays as they are, bounded by
 * the current size, so a view keeps answering for its own node count while the writer appends.
 *
 * <p>Why readers may share arrays the writer still fills: a view reads only ids below its own size,
 * all written before the view was published through the graph's volatile snapshot reference; a
 * table slot the writer fills later is either still 0 to the reader (the entries it needs lie
 * before it on their probe chains, which inserts never break) or holds an index at or above the
 * view's size, which the view skips without reading the id. When the table grows, the writer moves
 * to a new table and never writes the old one again. Storage: {@code 4·capacity} bytes of id
 * references (capacity up to 1.5·n) plus {@code 4·(2..4)·n} bytes of table, plus the ids
 * themselves.
 */
final class NodeIdTable<K> {

  private Object[] ids;
  private int[] table;
  private int size;

  NodeIdTable() {
    ids = new Object[16];
    table = new int[32];
  }

  int size() {
    return size;
  }

  /** Returns the index of {@code id}, or -1. Writer side. */
  int indexOf(Object id) {
    return find(table, ids, size, id);
  }

  /** Appends {@code id}, which must not be present, as index {@link #size()}. */
  void append(K id) {
    if (size == ids.length) {
      ids = Arrays.copyOf(ids, (int) Math.min(Integer.MAX_VALUE - 8L, size + (size >> 1) + 16L));
    }
    ids[size] = id;
    if (2L * (size + 1) > table.length) {
      table = rehash(ids, size, table.length * 2);
    }
    insert(table, id, size);
    size++;
  }

  /** Returns an immutable view of the ids added so far. */
  NodeIdView<K> view() {
    return new NodeIdView<>(ids, table, size);
  }

  static int spread(Object id) {
    int h = id.hashCode() * 0x9E3779B9;
    return h ^ (h >>> 16);
  }

  /** Finds {@code id} among the first {@code size} ids; entries at or above size are skipped. */
  static int find(int[] table, Object[] ids, int size, Object id) {
    int hash = spread(id);
    int slot = probe(table, hash, hash & (table.length - 1));
    while (slot >= 0) {
      int index = indexAt(table, slot);
      if (index < size && ids[index].equals(id)) {
        return index;
      }
      slot = probe(table, hash, (slot + 1) & (table.length - 1));
    }
    return -1;
  }

  /**
   * Returns the first slot from {@code slot} on (linear probing) whose hash bits match {@code
   * hash}, or -1 if an empty slot comes first. Reads the table only.
   */
  static int probe(int[] table, int hash, int slot) {
    int mask = table.length - 1;
    int tagShift = Integer.numberOfTrailingZeros(table.length);
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        return -1;
      }
      if (tagShift == Integer.SIZE || ((entry ^ hash) >>> tagShift) == 0) {
        return slot;
      }
      slot = (slot + 1) & mask;
    }
  }

  /** Returns the node index kept in a filled slot. */
  static int indexAt(int[] table, int slot) {
    return (table[slot] & (table.length - 1)) - 1;
  }

  private static void insert(int[] table, Object id, int index) {
    int mask = table.length - 1;
    int hash = spread(id);
    int slot = hash & mask;
    while (table[slot] != 0) {
      slot = (slot + 1) & mask;
    }
    table[slot] = (hash & ~mask) | (index + 1);
  }

  private static int[] rehash(Object[] ids, int size, int capacity) {
    if (capacity <= 0 || capacity > 1 << 30) {
      throw new IllegalStateException("too many nodes for one live graph: " + size);
    }
    int[] next = new int[capacity];
    for (int i = 0; i < size; i++) {
      insert(next, ids[i], i);
    }
    return next;
  }

  /** Bytes of the two arrays (payload plus 16-byte headers), not counting the ids themselves. */
  long storageBytes() {
    return Layout.arrayBytes(ids.length, 4) + Layout.arrayBytes(table.length, 4);
  }
}
