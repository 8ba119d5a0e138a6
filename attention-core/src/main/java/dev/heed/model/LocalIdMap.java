package dev.heed.model;

import java.util.Arrays;

/**
 * A map from global node ids (non-negative ints) to local ids, by open addressing with linear
 * probing. Clearing is O(1): each slot carries the epoch it was written in, and {@link #clear()}
 * starts a new epoch, so one map can be reused for call after call at a cost proportional to what
 * each call inserts, never to the graph's size (common practice for reused visited-marks).
 *
 * <p>Thread safety: not thread safe; confined to one call at a time (see {@link FieldScratch}).
 */
final class LocalIdMap {

  private int[] keys;
  private int[] values;
  private int[] stamps;
  private int epoch = 1;
  private int size;

  LocalIdMap(int expected) {
    allocate(capacityFor(expected));
  }

  /** Forgets every entry in O(1) (O(capacity) once every 2^32 clears, when the epoch wraps). */
  void clear() {
    size = 0;
    epoch++;
    if (epoch == 0) {
      Arrays.fill(stamps, 0);
      epoch = 1;
    }
  }

  /** Returns the number of slots, for the scratch pool's retention rule. */
  int capacity() {
    return keys.length;
  }

  /** Returns the local id of {@code key}, or -1 if absent. */
  int get(int key) {
    int slot = probe(key);
    return stamps[slot] == epoch ? values[slot] : -1;
  }

  /**
   * Maps {@code key} to {@code value} unless it is already mapped.
   *
   * @return the existing local id, or -1 if {@code key} was absent and is now mapped to {@code
   *     value}
   */
  int putIfAbsent(int key, int value) {
    int slot = probe(key);
    if (stamps[slot] == epoch) {
      return values[slot];
    }
    keys[slot] = key;
    values[slot] = value;
    stamps[slot] = epoch;
    size++;
    if (2 * size > keys.length) {
      grow();
    }
    return -1;
  }

  /** The slot that holds {@code key}, or the empty slot where it would go. */
  private int probe(int key) {
    int mask = keys.length - 1;
    int slot = spread(key) & mask;
    while (stamps[slot] == epoch && keys[slot] != key) {
      slot = (slot + 1) & mask;
    }
    return slot;
  }

  private void grow() {
    int[] oldKeys = keys;
    int[] oldValues = values;
    int[] oldStamps = stamps;
    int live = epoch;
    allocate(oldKeys.length * 2);
    epoch = 1;
    int mask = keys.length - 1;
    for (int s = 0; s < oldKeys.length; s++) {
      if (oldStamps[s] == live) {
        int slot = spread(oldKeys[s]) & mask;
        while (stamps[slot] == epoch) {
          slot = (slot + 1) & mask;
        }
        keys[slot] = oldKeys[s];
        values[slot] = oldValues[s];
        stamps[slot] = epoch;
      }
    }
  }

  private void allocate(int capacity) {
    keys = new int[capacity];
    values = new int[capacity];
    stamps = new int[capacity];
  }

  private static int capacityFor(int expected) {
    int capacity = 16;
    while (capacity < 2L * expected && capacity < 1 << 30) {
      capacity <<= 1;
    }
    return capacity;
  }

  /** Fibonacci hashing: multiply by 2^32/φ and fold the high bits down (common practice). */
  private static int spread(int key) {
    int h = key * 0x9E3779B9;
    return h ^ (h >>> 16);
  }
}
