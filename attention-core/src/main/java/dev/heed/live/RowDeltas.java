package dev.heed.live;

import dev.heed.graph.CsrGraph;
import java.util.Arrays;

/**
 * One row's changes over the base CSR: the sources added (none of them in the base row) and the
 * sources removed (all of them in the base row), each strictly increasing. A row of a node the base
 * does not cover has an empty base row. Two forms, both immutable:
 *
 * <ul>
 *   <li>flat, for up to {@value #FLAT_LIMIT} changes: one {@code int[]}, {@code d[0] = a} the
 *       number added, {@code d[1..a]} the added sources, {@code d[a+1..]} the removed ones; {@code
 *       16 + 4·(1 + changes)} bytes (rounded up to 8), rewritten in O(changes) by an update;
 *   <li>chunked ({@link Chunked}), beyond that: each side in {@link SortedChunks}, so that an
 *       update of a high-degree row copies a directory and a few chunks instead of all its changes.
 * </ul>
 *
 * Null stands for "no change". These static methods take either form.
 */
final class RowDeltas {

  /** The most changes a flat delta holds; more are chunked (and fewer than half go flat again). */
  static final int FLAT_LIMIT = 2 * SortedChunks.MAX_CHUNK;

  private RowDeltas() {}

  /** A delta with both sides chunked. */
  static final class Chunked {
    final SortedChunks added;
    final SortedChunks removed;

    Chunked(SortedChunks added, SortedChunks removed) {
      this.added = added;
      this.removed = removed;
    }
  }

  static int addedCount(Object delta) {
    if (delta == null) {
      return 0;
    }
    return delta instanceof int[] ? ((int[]) delta)[0] : ((Chunked) delta).added.size();
  }

  static int removedCount(Object delta) {
    if (delta == null) {
      return 0;
    }
    if (delta instanceof int[]) {
      int[] flat = (int[]) delta;
      return flat.length - 1 - flat[0];
    }
    return ((Chunked) delta).removed.size();
  }

  /** Returns the row's length given its base length. */
  static int degree(int baseDegree, Object delta) {
    return baseDegree + addedCount(delta) - removedCount(delta);
  }

  /** Returns the number of changes the delta stores (added plus removed). */
  static int entries(Object delta) {
    return addedCount(delta) + removedCount(delta);
  }

  /** Returns the bytes of the delta, 0 for none. */
  static long bytes(Object delta) {
    if (delta == null) {
      return 0;
    }
    if (delta instanceof int[]) {
      return Layout.arrayBytes(((int[]) delta).length, 4);
    }
    Chunked chunked = (Chunked) delta;
    return 24 + chunked.added.bytes() + chunked.removed.bytes();
  }

  static boolean isAdded(Object delta, int source) {
    if (delta == null) {
      return false;
    }
    if (delta instanceof int[]) {
      int[] flat = (int[]) delta;
      return Arrays.binarySearch(flat, 1, 1 + flat[0], source) >= 0;
    }
    return ((Chunked) delta).added.contains(source);
  }

  static boolean isRemoved(Object delta, int source) {
    if (delta == null) {
      return false;
    }
    if (delta instanceof int[]) {
      int[] flat = (int[]) delta;
      return Arrays.binarySearch(flat, 1 + flat[0], flat.length, source) >= 0;
    }
    return ((Chunked) delta).removed.contains(source);
  }

  /**
   * Returns whether the base row of {@code target} holds {@code source} (false beyond the base).
   */
  static boolean baseHas(CsrGraph base, int target, int source) {
    int n = base.nodeCount();
    return target < n && source < n && base.entryOf(target, source) >= 0;
  }

  /**
   * Returns the delta with sorted added and removed sources, or null when both are empty; flat up
   * to {@link #FLAT_LIMIT} changes, chunked beyond.
   */
  static Object of(int[] added, int addedCount, int[] removed, int removedCount) {
    if (addedCount == 0 && removedCount == 0) {
      return null;
    }
    if (addedCount + removedCount > FLAT_LIMIT) {
      return new Chunked(
          SortedChunks.of(added, 0, addedCount), SortedChunks.of(removed, 0, removedCount));
    }
    int[] delta = new int[1 + addedCount + removedCount];
    delta[0] = addedCount;
    System.arraycopy(added, 0, delta, 1, addedCount);
    System.arraycopy(removed, 0, delta, 1 + addedCount, removedCount);
    return delta;
  }

  /** Returns the delta's sides as chunked sets (a flat delta is chunked on the way). */
  static Chunked chunked(Object delta) {
    if (delta == null) {
      return new Chunked(SortedChunks.EMPTY, SortedChunks.EMPTY);
    }
    if (delta instanceof Chunked) {
      return (Chunked) delta;
    }
    int[] flat = (int[]) delta;
    return new Chunked(
        SortedChunks.of(flat, 1, 1 + flat[0]), SortedChunks.of(flat, 1 + flat[0], flat.length));
  }

  /** Returns a chunked delta, or its flat form when it has shrunk to half the flat limit. */
  static Object settle(SortedChunks added, SortedChunks removed) {
    int total = added.size() + removed.size();
    if (total == 0) {
      return null;
    }
    if (total > FLAT_LIMIT / 2) {
      return new Chunked(added, removed);
    }
    int[] flat = new int[1 + total];
    flat[0] = added.size();
    added.copyTo(flat, 1);
    removed.copyTo(flat, 1 + added.size());
    return flat;
  }

  /**
   * Writes the base row {@code base.column(start .. end-1)} with the delta applied into {@code
   * into} from {@code offset}, in increasing order, and returns the count. The caller checked that
   * {@code into} has room.
   */
  static int merge(CsrGraph base, int start, int end, Object delta, int[] into, int offset) {
    if (delta instanceof int[]) {
      int[] flat = (int[]) delta;
      return mergeFlat(base, start, end, flat, into, offset);
    }
    return mergeChunked(base, start, end, (Chunked) delta, into, offset);
  }

  private static int mergeFlat(
      CsrGraph base, int start, int end, int[] delta, int[] into, int offset) {
    int added = 1;
    int addedEnd = 1 + delta[0];
    int removed = addedEnd;
    int removedEnd = delta.length;
    int w = offset;
    for (int e = start; e < end; e++) {
      int c = base.column(e);
      if (removed < removedEnd && delta[removed] == c) {
        removed++;
        continue;
      }
      while (added < addedEnd && delta[added] < c) {
        into[w++] = delta[added++];
      }
      into[w++] = c;
    }
    while (added < addedEnd) {
      into[w++] = delta[added++];
    }
    return w - offset;
  }

  private static int mergeChunked(
      CsrGraph base, int start, int end, Chunked delta, int[] into, int offset) {
    SortedChunks addedSet = delta.added;
    SortedChunks removedSet = delta.removed;
    int addedChunk = 0;
    int[] added = addedSet.chunkCount() > 0 ? addedSet.chunk(0) : null;
    int a = 0;
    int removedChunk = 0;
    int[] removed = removedSet.chunkCount() > 0 ? removedSet.chunk(0) : null;
    int r = 0;
    int w = offset;
    for (int e = start; e < end; e++) {
      int c = base.column(e);
      if (removed != null && removed[r] == c) {
        if (++r == removed.length) {
          r = 0;
          removed =
              ++removedChunk < removedSet.chunkCount() ? removedSet.chunk(removedChunk) : null;
        }
        continue;
      }
      while (added != null && added[a] < c) {
        into[w++] = added[a];
        if (++a == added.length) {
          a = 0;
          added = ++addedChunk < addedSet.chunkCount() ? addedSet.chunk(addedChunk) : null;
        }
      }
      into[w++] = c;
    }
    while (added != null) {
      System.arraycopy(added, a, into, w, added.length - a);
      w += added.length - a;
      a = 0;
      added = ++addedChunk < addedSet.chunkCount() ? addedSet.chunk(addedChunk) : null;
    }
    return w - offset;
  }

  /**
   * Returns the delta that turns the base row {@code base.column(start .. end-1)} into {@code row[0
   * .. length-1]} (strictly increasing), or null when they are equal. O(base + length).
   */
  static Object diff(CsrGraph base, int start, int end, int[] row, int length) {
    int[] added = new int[length];
    int addedCount = 0;
    int[] removed = new int[end - start];
    int removedCount = 0;
    int e = start;
    int k = 0;
    while (e < end || k < length) {
      int b = e < end ? base.column(e) : Integer.MAX_VALUE;
      int r = k < length ? row[k] : Integer.MAX_VALUE;
      if (b == r) {
        e++;
        k++;
      } else if (b < r) {
        removed[removedCount++] = b;
        e++;
      } else {
        added[addedCount++] = r;
        k++;
      }
    }
    return of(added, addedCount, removed, removedCount);
  }
}
