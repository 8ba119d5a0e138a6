package dev.heed.live;

import dev.heed.graph.CsrGraph;

/**
 * Membership tests of many keys in many sorted ranges at once: one step of binary search at a time
 * over all of them, so that the cache misses of different searches overlap instead of waiting one
 * after another (group prefetching; Chen, Ailamaki, Gibbons, Mowry, "Improving Hash Join
 * Performance through Prefetching", ICDE 2004). Each search is the branch-free form of binary
 * search that halves the range whatever it finds and compares once at the end (common practice).
 * Stateless; the callers' arrays are confined to one thread.
 */
final class StagedSearch {

  private StagedSearch() {}

  /**
   * Sets {@code found[k]} to whether {@code keys[k]} is among {@code base.column(low[k] ..
   * low[k]+length[k]-1)}, a sorted range, for {@code k < count}. {@code low} and {@code length} are
   * used as scratch.
   */
  static void inBaseRows(
      CsrGraph base, int[] low, int[] length, int[] keys, int count, boolean[] found) {
    search(base, null, low, length, keys, count, found);
  }

  /**
   * Sets {@code found[k]} to whether {@code keys[k]} is among {@code arrays[k][low[k] ..
   * low[k]+length[k]-1]}, a sorted range, for {@code k < count} ({@code arrays[k]} may be null
   * where {@code length[k]} is 0). {@code low} and {@code length} are used as scratch.
   */
  static void inArrays(
      int[][] arrays, int[] low, int[] length, int[] keys, int count, boolean[] found) {
    search(null, arrays, low, length, keys, count, found);
  }

  /** The searches of both kinds: in {@code base}'s columns when {@code arrays} is null. */
  private static void search(
      CsrGraph base,
      int[][] arrays,
      int[] low,
      int[] length,
      int[] keys,
      int count,
      boolean[] found) {
    int[] active = new int[count];
    int n = 0;
    for (int k = 0; k < count; k++) {
      if (length[k] > 1) {
        active[n++] = k;
      }
    }
    while (n > 0) {
      int kept = 0;
      for (int j = 0; j < n; j++) {
        int k = active[j];
        int half = length[k] >>> 1;
        int probe = low[k] + half;
        if ((arrays == null ? base.column(probe) : arrays[k][probe]) <= keys[k]) {
          low[k] = probe;
        }
        length[k] -= half;
        if (length[k] > 1) {
          active[kept++] = k;
        }
      }
      n = kept;
    }
    for (int k = 0; k < count; k++) {
      found[k] =
          length[k] > 0 && (arrays == null ? base.column(low[k]) : arrays[k][low[k]]) == keys[k];
    }
  }
}
