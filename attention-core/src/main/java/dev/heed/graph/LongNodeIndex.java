package dev.heed.graph;

import java.util.Objects;

/**
 * A {@link NodeIndex} over integer ids, stored as primitives: either the identity (id {@code i} is
 * node {@code i}, no storage) or a map built from the ids in the order they were first seen (a
 * {@code long[]} of ids plus an open-addressing {@code int[]} table at load at most 1/2, so {@code
 * 8·n + 4·(2..4)·n} bytes). Use {@link #indexOfId(long)} and {@link #idAt(int)} to avoid boxing.
 *
 * <p>Thread safety: immutable.
 */
public final class LongNodeIndex implements NodeIndex<Long> {

  private final int size;
  private final long[] ids; // null for the identity
  private final int[] table; // null for the identity

  private LongNodeIndex(int size, long[] ids, int[] table) {
    this.size = size;
    this.ids = ids;
    this.table = table;
  }

  /**
   * Returns the identity index on {@code n} nodes: id {@code i} is node {@code i}.
   *
   * @param n the node count, at least 0
   * @return the index
   * @throws IllegalArgumentException if {@code n} is negative
   */
  public static LongNodeIndex identity(int n) {
    if (n < 0) {
      throw new IllegalArgumentException("node count must be at least 0, got " + n);
    }
    return new LongNodeIndex(n, null, null);
  }

  static LongNodeIndex mapped(long[] ids, int[] table) {
    return new LongNodeIndex(ids.length, ids, table);
  }

  static int find(int[] table, long[] ids, long id) {
    int mask = table.length - 1;
    int slot = LongIdTable.hash(id) & mask;
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        return -1;
      }
      if (ids[entry - 1] == id) {
        return entry - 1;
      }
      slot = (slot + 1) & mask;
    }
  }

  /**
   * Returns whether ids are used as node indices as they are (no map).
   *
   * @return true for the identity index
   */
  public boolean isIdentity() {
    return ids == null;
  }

  @Override
  public int size() {
    return size;
  }

  /**
   * Returns the id of node {@code index}, without boxing.
   *
   * @param index a node index in {@code 0..n-1}
   * @return the id
   * @throws IndexOutOfBoundsException if {@code index} is out of range
   */
  public long idAt(int index) {
    Objects.checkIndex(index, size);
    return ids == null ? index : ids[index];
  }

  /**
   * Returns the node index of {@code id}, or -1 if it is not a node, without boxing. O(1) expected.
   *
   * @param id the id
   * @return the index in {@code 0..n-1}, or -1
   */
  public int indexOfId(long id) {
    if (ids == null) {
      return id >= 0 && id < size ? (int) id : -1;
    }
    return find(table, ids, id);
  }

  @Override
  public Long idOf(int index) {
    return idAt(index);
  }

  @Override
  public int indexOf(Long id) {
    Objects.requireNonNull(id, "node id");
    return indexOfId(id);
  }

  /**
   * Returns the bytes held by this index's arrays (payload plus 16-byte array headers, common
   * practice for a 64-bit JVM with compressed class pointers), for memory accounting.
   *
   * @return the storage in bytes, 0 for the identity
   */
  public long storageBytes() {
    return ids == null ? 0 : 16L + 8L * ids.length + 16L + 4L * table.length;
  }

  @Override
  public String toString() {
    return "LongNodeIndex[n=" + size + (ids == null ? ", identity]" : ", mapped]");
  }
}
