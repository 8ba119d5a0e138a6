package dev.heed.live;

import dev.heed.graph.CsrGraph;
import java.util.Arrays;

/**
 * One target row's changes while a batch is staged: the row's base range and its delta, unpacked
 * into two sorted, growable lists that the batch's operations edit in order. Confined to the
 * applying thread; nothing shared is touched until the batch commits.
 */
final class RowEditor {

  final int target;
  final int[] oldDelta; // null when the row had no delta
  private final CsrGraph base;
  private int[] added;
  private int addedCount;
  private int[] removed;
  private int removedCount;

  RowEditor(int target, CsrGraph base, int[] oldDelta) {
    this.target = target;
    this.base = base;
    this.oldDelta = oldDelta;
    if (oldDelta == null) {
      added = new int[4];
      removed = new int[0];
    } else {
      int a = RowDeltas.addedCount(oldDelta);
      added = Arrays.copyOfRange(oldDelta, 1, 1 + a + 4); // 4 spare slots, zero-padded
      addedCount = a;
      removed = Arrays.copyOfRange(oldDelta, 1 + a, oldDelta.length);
      removedCount = removed.length;
    }
  }

  /** Returns whether the row, with the changes staged so far, holds {@code source}. */
  boolean contains(int source) {
    if (Arrays.binarySearch(added, 0, addedCount, source) >= 0) {
      return true;
    }
    if (Arrays.binarySearch(removed, 0, removedCount, source) >= 0) {
      return false;
    }
    return RowDeltas.baseHas(base, target, source);
  }

  /** Adds {@code source}, which {@link #contains} must have reported absent. */
  void add(int source) {
    int at = Arrays.binarySearch(removed, 0, removedCount, source);
    if (at >= 0) {
      removedCount = deleteAt(removed, removedCount, at);
    } else {
      added = insert(added, addedCount++, source);
    }
  }

  /** Removes {@code source}, which {@link #contains} must have reported present. */
  void remove(int source) {
    int at = Arrays.binarySearch(added, 0, addedCount, source);
    if (at >= 0) {
      addedCount = deleteAt(added, addedCount, at);
    } else {
      removed = insert(removed, removedCount++, source);
    }
  }

  /** Inserts an absent value into the sorted {@code list[0..count-1]}, growing it if full. */
  private static int[] insert(int[] list, int count, int value) {
    int at = -Arrays.binarySearch(list, 0, count, value) - 1;
    int[] out = count < list.length ? list : Arrays.copyOf(list, count + (count >> 1) + 4);
    System.arraycopy(out, at, out, at + 1, count - at);
    out[at] = value;
    return out;
  }

  private static int deleteAt(int[] list, int count, int at) {
    System.arraycopy(list, at + 1, list, at, count - at - 1);
    return count - 1;
  }

  /** Returns the row's new delta, or null when the row equals its base row. */
  int[] encode() {
    return RowDeltas.encode(added, addedCount, removed, removedCount);
  }
}
