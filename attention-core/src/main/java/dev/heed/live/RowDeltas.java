package dev.heed.live;

import dev.heed.graph.CsrGraph;

/**
 * The encoding of one row's changes over the base CSR, as one {@code int[]}: {@code d[0] = a}, the
 * number of sources added; {@code d[1..a]} the added sources, strictly increasing, none in the base
 * row; {@code d[a+1..]} the removed sources, strictly increasing, all in the base row. A row of a
 * node the base does not cover has an empty base row. One array per changed row keeps the cost at
 * {@code 16 + 4·(1 + a + r)} bytes (rounded up to 8) and a copy-on-write update at O(a + r),
 * however long the base row is.
 */
final class RowDeltas {

  private RowDeltas() {}

  static int addedCount(int[] delta) {
    return delta[0];
  }

  static int removedCount(int[] delta) {
    return delta.length - 1 - delta[0];
  }

  /** Returns the row's length given its base length. */
  static int degree(int baseDegree, int[] delta) {
    return delta == null ? baseDegree : baseDegree + 2 * delta[0] + 1 - delta.length;
  }

  /** Returns the number of entries the delta stores (added plus removed). */
  static int entries(int[] delta) {
    return delta == null ? 0 : delta.length - 1;
  }

  /** Returns the bytes of the delta array, 0 for none. */
  static long bytes(int[] delta) {
    return delta == null ? 0 : Layout.arrayBytes(delta.length, 4);
  }

  /**
   * Returns whether the base row of {@code target} holds {@code source} (false beyond the base).
   */
  static boolean baseHas(CsrGraph base, int target, int source) {
    int n = base.nodeCount();
    return target < n && source < n && base.entryOf(target, source) >= 0;
  }

  /** Encodes sorted added and removed sources, or returns null when both are empty. */
  static int[] encode(int[] added, int addedCount, int[] removed, int removedCount) {
    if (addedCount == 0 && removedCount == 0) {
      return null;
    }
    int[] delta = new int[1 + addedCount + removedCount];
    delta[0] = addedCount;
    System.arraycopy(added, 0, delta, 1, addedCount);
    System.arraycopy(removed, 0, delta, 1 + addedCount, removedCount);
    return delta;
  }

  /**
   * Writes the base row {@code base.column(start .. end-1)} with the delta applied into {@code
   * into} from {@code offset}, in increasing order, and returns the count. The caller checked that
   * {@code into} has room.
   */
  static int merge(CsrGraph base, int start, int end, int[] delta, int[] into, int offset) {
    int a = delta[0];
    int added = 1;
    int addedEnd = 1 + a;
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

  /**
   * Returns the delta that turns the base row {@code base.column(start .. end-1)} into {@code row[0
   * .. length-1]} (strictly increasing), or null when they are equal. O(base + length).
   */
  static int[] diff(CsrGraph base, int start, int end, int[] row, int length) {
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
    return encode(added, addedCount, removed, removedCount);
  }
}
