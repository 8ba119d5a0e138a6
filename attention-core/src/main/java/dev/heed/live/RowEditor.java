package dev.heed.live;

import dev.heed.graph.CsrGraph;
import java.util.Arrays;

/**
 * One target row's changes while a batch is staged: the sources the batch adds to and removes from
 * the row as it was before the batch (two short sorted lists, net of each other), over the row's
 * old delta and base range, which are only read. {@link #encode()} merges them into the row's new
 * delta in one pass. Confined to the applying thread; nothing shared is touched.
 */
final class RowEditor {

  /** What {@link #contains(int, byte)} is told about a source before the batch: not looked up. */
  static final byte UNKNOWN = 0;

  /** The row held the source before the batch. */
  static final byte PRESENT = 1;

  /** The row did not hold the source before the batch. */
  static final byte ABSENT = 2;

  private static final int[] NONE = new int[0];

  final int target;
  final Object oldDelta; // null when the row had no delta; see RowDeltas
  private final CsrGraph base;
  private int[] added = NONE;
  private int addedCount;
  private int[] removed = NONE;
  private int removedCount;
  private int adds; // row entries added by the batch's operations, before netting
  private int removes;
  private int[] log = NONE; // source << 1 | 1 for an add, 0 for a removal, in batch order
  private int[] logOps = NONE; // the operation of each log entry
  private int logCount;
  private Object encoded;
  private long entryChange;
  private long byteChange;
  private boolean encodedReady;

  RowEditor(int target, CsrGraph base, Object oldDelta) {
    this.target = target;
    this.base = base;
    this.oldDelta = oldDelta;
  }

  /**
   * Records that operation {@code op} asks to add ({@code adding}) or remove {@code source}, so
   * that {@link #replayOnto} can run the row's operations again over a newer version of the row.
   * Only batches staged before taking the write lock keep a log; their sources are below 2^30.
   */
  void log(int op, int source, boolean adding) {
    if (logCount == log.length) {
      log = Arrays.copyOf(log, logCount * 2 + 4);
      logOps = Arrays.copyOf(logOps, log.length);
    }
    logOps[logCount] = op;
    log[logCount++] = source << 1 | (adding ? 1 : 0);
  }

  /**
   * Runs the logged operations again on the same row over {@code newerDelta} (the row's delta in a
   * later version with the same base) and returns the resulting editor, or null if one of them
   * cannot apply there (the caller then stages the whole batch again, to report it exactly).
   */
  RowEditor replayOnto(Object newerDelta, boolean rejectDuplicates) {
    RowEditor replay = new RowEditor(target, base, newerDelta);
    for (int k = 0; k < logCount; k++) {
      int source = log[k] >>> 1;
      boolean present = replay.contains(source);
      if ((log[k] & 1) == 1) {
        if (present && rejectDuplicates) {
          return null;
        }
        if (!present) {
          replay.add(source);
        }
      } else {
        if (!present) {
          return null;
        }
        replay.remove(source);
      }
      replay.log(logOps[k], source, (log[k] & 1) == 1);
    }
    return replay;
  }

  int adds() {
    return adds;
  }

  int removes() {
    return removes;
  }

  /** Returns whether the row, with the changes staged so far, holds {@code source}. */
  boolean contains(int source) {
    return contains(source, UNKNOWN);
  }

  /**
   * {@link #contains(int)}, given whether the row held {@code source} before the batch: {@link
   * #PRESENT}, {@link #ABSENT}, or {@link #UNKNOWN} (then looked up here).
   */
  boolean contains(int source, byte before) {
    if (addedCount > 0 && Arrays.binarySearch(added, 0, addedCount, source) >= 0) {
      return true;
    }
    if (removedCount > 0 && Arrays.binarySearch(removed, 0, removedCount, source) >= 0) {
      return false;
    }
    if (before != UNKNOWN) {
      return before == PRESENT;
    }
    if (RowDeltas.isAdded(oldDelta, source)) {
      return true;
    }
    return !RowDeltas.isRemoved(oldDelta, source) && RowDeltas.baseHas(base, target, source);
  }

  /** Adds {@code source}, which {@link #contains} must have reported absent. */
  void add(int source) {
    adds++;
    encodedReady = false;
    int at = removedCount > 0 ? Arrays.binarySearch(removed, 0, removedCount, source) : -1;
    if (at >= 0) {
      removedCount = deleteAt(removed, removedCount, at);
    } else {
      added = insert(added, addedCount++, source);
    }
  }

  /** Removes {@code source}, which {@link #contains} must have reported present. */
  void remove(int source) {
    removes++;
    encodedReady = false;
    int at = addedCount > 0 ? Arrays.binarySearch(added, 0, addedCount, source) : -1;
    if (at >= 0) {
      addedCount = deleteAt(added, addedCount, at);
    } else {
      removed = insert(removed, removedCount++, source);
    }
  }

  /** Returns whether the batch changed the row (its additions and removals did not cancel out). */
  boolean changed() {
    return addedCount + removedCount > 0;
  }

  /**
   * Returns the row's new delta over the base, or null when the row equals its base row. A source
   * this batch adds was either removed from the base before (it stops being removed) or is new to
   * the row (it becomes added); a source it removes was either added before (it stops being added)
   * or is in the base (it becomes removed). O(old delta + changes) for a flat delta, O(directory +
   * touched chunks) for a chunked one.
   */
  Object encode() {
    if (!encodedReady) {
      encoded = encodeNow();
      entryChange = RowDeltas.entries(encoded) - RowDeltas.entries(oldDelta);
      byteChange = RowDeltas.bytes(encoded) - RowDeltas.bytes(oldDelta);
      encodedReady = true;
    }
    return encoded;
  }

  /** Returns the change in stored delta entries from the old delta to {@link #encode()}'s. */
  long entryChange() {
    encode();
    return entryChange;
  }

  /** Returns the change in delta bytes from the old delta to {@link #encode()}'s. */
  long byteChange() {
    encode();
    return byteChange;
  }

  private Object encodeNow() {
    if (oldDelta == null) { // the common case while ingesting: nothing to merge with
      return RowDeltas.of(added, addedCount, removed, removedCount);
    }
    if (removedCount == 0
        && addedCount > 0
        && oldDelta instanceof int[]
        && ((int[]) oldDelta).length == 1 + ((int[]) oldDelta)[0]
        && ((int[]) oldDelta).length + addedCount <= 1 + RowDeltas.FLAT_LIMIT) {
      // only additions over a flat delta that removes nothing (the common case while ingesting):
      // one merge straight into the new delta
      int[] old = (int[]) oldDelta;
      int[] delta = new int[old.length + addedCount];
      delta[0] = old[0] + addedCount;
      SortedChunks.merge(old, 1, old.length, NONE, 0, added, addedCount, delta, 1);
      return delta;
    }
    int[] newlyAdded = without(added, addedCount, true);
    int[] newlyRemoved = without(removed, removedCount, false);
    int oldEntries = RowDeltas.entries(oldDelta);
    if (oldDelta instanceof RowDeltas.Chunked
        || oldEntries + newlyAdded.length + newlyRemoved.length > RowDeltas.FLAT_LIMIT) {
      RowDeltas.Chunked old = RowDeltas.chunked(oldDelta);
      return RowDeltas.settle(
          old.added.update(removed, removedCount, newlyAdded, newlyAdded.length),
          old.removed.update(added, addedCount, newlyRemoved, newlyRemoved.length));
    }
    int[] old = oldDelta == null ? new int[1] : (int[]) oldDelta;
    int oldAdded = old[0];
    int[] sides = new int[oldEntries + newlyAdded.length + newlyRemoved.length];
    int newAdded =
        SortedChunks.merge(
            old, 1, 1 + oldAdded, removed, removedCount, newlyAdded, newlyAdded.length, sides, 0);
    int end =
        SortedChunks.merge(
            old,
            1 + oldAdded,
            old.length,
            added,
            addedCount,
            newlyRemoved,
            newlyRemoved.length,
            sides,
            newAdded);
    int[] newRemoved = Arrays.copyOfRange(sides, newAdded, end);
    return RowDeltas.of(sides, newAdded, newRemoved, newRemoved.length);
  }

  /**
   * Returns {@code values[0..count-1]} without those that only take back an old change: sources
   * this batch adds that the old delta removed ({@code adding}), or sources it removes that the old
   * delta added.
   */
  private int[] without(int[] values, int count, boolean adding) {
    int[] out = new int[count];
    int w = 0;
    for (int k = 0; k < count; k++) {
      int v = values[k];
      if (adding ? !RowDeltas.isRemoved(oldDelta, v) : !RowDeltas.isAdded(oldDelta, v)) {
        out[w++] = v;
      }
    }
    return w == count ? out : Arrays.copyOf(out, w);
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
}
