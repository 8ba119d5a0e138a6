package dev.heed.model;

import java.util.Arrays;

/**
 * A map from global node ids (non-negative ints) to local ids (non-negative ints), by open
 * addressing with linear probing, each entry packed in one {@code long} so that a probe touches one
 * cache line. {@link #clear()} empties only the slots the last use filled (it keeps their indices),
 * so one map serves call after call at a cost proportional to what each call inserts, never to the
 * largest call's capacity or to the graph's size.
 *
 * <p>Thread safety: not thread safe; confined to one call at a time (see {@link FieldScratch}).
 */
final class LocalIdMap {

  private static final long EMPTY = -1L;

  private long[] slots; // (long) key << 32 | value, or EMPTY
  private int[] used; // the slot of each entry, in insertion order
  private int size;

  LocalIdMap(int expected) {
    int capacity = 16;
    while (capacity < 2L * expected && capacity < 1 << 30) {
      capacity <<= 1;
    }
    slots = new long[capacity];
    Arrays.fill(slots, EMPTY);
    used = new int[capacity / 2 + 1];
  }

  /** Forgets every entry, in O(entries). */
  void clear() {
    for (int i = 0; i < size; i++) {
      slots[used[i]] = EMPTY;
    }
    size = 0;
  }

  /** Returns the number of slots, for the scratch pool's retention rule. */
  int capacity() {
    return slots.length;
  }

  /** Returns the local id of {@code key}, or -1 if absent. */
  int get(int key) {
    long entry = slots[probe(key)];
    return entry == EMPTY ? -1 : (int) entry;
  }

  /**
   * Maps {@code key} to {@code value} unless it is already mapped.
   *
   * @return the existing local id, or -1 if {@code key} was absent and is now mapped to {@code
   *     value}
   */
  int putIfAbsent(int key, int value) {
    int slot = probe(key);
    long entry = slots[slot];
    if (entry != EMPTY) {
      return (int) entry;
    }
    slots[slot] = ((long) key << 32) | value;
    used[size++] = slot;
    if (2 * size > slots.length) {
      grow();
    }
    return -1;
  }

  /** The slot that holds {@code key}, or the empty slot where it would go. */
  private int probe(int key) {
    int mask = slots.length - 1;
    int slot = spread(key) & mask;
    long entry;
    while ((entry = slots[slot]) != EMPTY && (int) (entry >>> 32) != key) {
      slot = (slot + 1) & mask;
    }
    return slot;
  }

  private void grow() {
    long[] old = slots;
    slots = new long[old.length * 2];
    Arrays.fill(slots, EMPTY);
    used = Arrays.copyOf(used, slots.length / 2 + 1);
    int mask = slots.length - 1;
    for (int i = 0; i < size; i++) {
      long entry = old[used[i]];
      int slot = spread((int) (entry >>> 32)) & mask;
      while (slots[slot] != EMPTY) {
        slot = (slot + 1) & mask;
      }
      slots[slot] = entry;
      used[i] = slot;
    }
  }

  /** Fibonacci hashing: multiply by 2^32/φ and fold the high bits down (common practice). */
  private static int spread(int key) {
    int h = key * 0x9E3779B9;
    return h ^ (h >>> 16);
  }
}
