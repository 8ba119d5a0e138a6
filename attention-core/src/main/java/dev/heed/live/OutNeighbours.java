package dev.heed.live;

import java.util.Arrays;

/**
 * The reverse of a directed live graph's rows: for each source, the targets whose rows hold it (the
 * nodes it feeds), which an incremental scorer walks to find whose outputs a change reaches. Built
 * once from a snapshot in O(n + E), then kept in step batch by batch from the changed rows, by
 * comparing each changed row in the old and the new snapshot (O(old + new degree) per row). Lists
 * are unordered.
 *
 * <p>Memory: per node an int array (16 bytes of header) with its targets and up to half again as
 * much slack, plus 8 bytes of reference and count.
 *
 * <p>Thread safety: none; confined to the scorer's refresh lock.
 */
final class OutNeighbours {

  private static final int[] EMPTY = new int[0];

  private int[][] targets;
  private int[] counts;
  private int nodeCount;

  OutNeighbours(LiveSnapshot<?> snapshot) {
    int n = snapshot.nodeCount();
    targets = new int[Math.max(16, n)][];
    counts = new int[targets.length];
    nodeCount = n;
    int[] row = new int[16];
    for (int v = 0; v < n; v++) {
      int d = snapshot.degree(v);
      if (d > 0) {
        if (row.length < d) {
          row = new int[Math.max(d, row.length * 2)];
        }
        snapshot.copyRow(v, row, 0);
        for (int k = 0; k < d; k++) {
          counts[row[k]]++;
        }
      }
    }
    for (int u = 0; u < n; u++) {
      targets[u] = counts[u] == 0 ? EMPTY : new int[counts[u]];
      counts[u] = 0;
    }
    for (int v = 0; v < n; v++) {
      int d = snapshot.degree(v);
      if (d > 0) {
        snapshot.copyRow(v, row, 0);
        for (int k = 0; k < d; k++) {
          int u = row[k];
          targets[u][counts[u]++] = v;
        }
      }
    }
  }

  /** Grows to {@code n} nodes (new nodes feed nobody yet). */
  void grow(int n) {
    if (n > targets.length) {
      int capacity = Math.max(n, targets.length + (targets.length >> 1));
      targets = Arrays.copyOf(targets, capacity);
      counts = Arrays.copyOf(counts, capacity);
    }
    for (int u = nodeCount; u < n; u++) {
      targets[u] = EMPTY;
    }
    nodeCount = Math.max(nodeCount, n);
  }

  /** Applies the change of {@code target}'s row from {@code before} to {@code after} (sorted). */
  void replaceRow(int target, int[] before, int beforeLength, int[] after, int afterLength) {
    int i = 0;
    int j = 0;
    while (i < beforeLength || j < afterLength) {
      int b = i < beforeLength ? before[i] : Integer.MAX_VALUE;
      int a = j < afterLength ? after[j] : Integer.MAX_VALUE;
      if (b == a) {
        i++;
        j++;
      } else if (b < a) {
        remove(b, target);
        i++;
      } else {
        add(a, target);
        j++;
      }
    }
  }

  /** The number of targets {@code source} feeds. */
  int count(int source) {
    return counts[source];
  }

  /** The targets {@code source} feeds, in {@code [0, count(source))}; do not modify. */
  int[] targets(int source) {
    return targets[source];
  }

  /** Bytes held, counted from array lengths (Java object headers of 16 bytes). */
  long bytes() {
    long total = Layout.arrayBytes(targets.length, 4) + Layout.arrayBytes(counts.length, 4);
    for (int u = 0; u < nodeCount; u++) {
      if (targets[u].length > 0) {
        total += Layout.arrayBytes(targets[u].length, 4);
      }
    }
    return total;
  }

  private void add(int source, int target) {
    int[] list = targets[source];
    int c = counts[source];
    if (c == list.length) {
      list = Arrays.copyOf(list, Math.max(4, c + (c >> 1) + 1));
      targets[source] = list;
    }
    list[c] = target;
    counts[source] = c + 1;
  }

  private void remove(int source, int target) {
    int[] list = targets[source];
    int c = counts[source];
    for (int k = 0; k < c; k++) {
      if (list[k] == target) {
        list[k] = list[c - 1];
        counts[source] = c - 1;
        return;
      }
    }
    throw new IllegalStateException(
        "reverse rows out of step: " + target + " was not listed as fed by " + source);
  }
}
