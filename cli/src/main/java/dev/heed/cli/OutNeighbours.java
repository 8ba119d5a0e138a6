package dev.heed.cli;

import dev.heed.graph.NeighbourRows;
import java.util.Arrays;

/**
 * The reverse of a graph's rows, kept up to date as it changes: for each node {@code j}, the
 * targets {@code i} whose row holds {@code j} (the nodes that attend to {@code j}, one hop
 * downstream). Rows give in-neighbours only, and a change at {@code j} reaches exactly these nodes
 * at the next attention layer.
 *
 * <p>Built in O(n + E) from one version; {@link #update} then diffs the rows a batch changed
 * against the previous version, O(Σ degree) over those rows. Each list is unsorted; removing costs
 * O(its length). Memory: about 4 bytes per entry plus 16 per node.
 *
 * <p>Thread safety: not thread safe; one replay owns it.
 */
final class OutNeighbours {

  private static final int[] EMPTY = new int[0];

  private int[][] lists;
  private int[] sizes;
  private int nodeCount;
  private int[] scratchOld = new int[16];
  private int[] scratchNew = new int[16];

  /** The reverse of {@code rows}' version. */
  OutNeighbours(NeighbourRows rows) {
    nodeCount = rows.nodeCount();
    lists = new int[Math.max(nodeCount, 1)][];
    sizes = new int[lists.length];
    Arrays.fill(lists, EMPTY);
    int[] row = new int[16];
    for (int i = 0; i < nodeCount; i++) {
      int d = rows.degree(i);
      row = ensure(row, d);
      rows.copyRow(i, row, 0);
      for (int k = 0; k < d; k++) {
        add(row[k], i);
      }
    }
  }

  /** Number of nodes covered. */
  int nodeCount() {
    return nodeCount;
  }

  /** How many nodes attend to {@code node}. */
  int size(int node) {
    return sizes[node];
  }

  /** The {@code k}-th node that attends to {@code node}, in no particular order. */
  int get(int node, int k) {
    assert k < sizes[node];
    return lists[node][k];
  }

  /**
   * Moves from version {@code before} to version {@code after}, given the rows that changed between
   * them (every row of a node added since must be among them).
   *
   * @param before the version this index describes
   * @param after the next version
   * @param changedRows the targets whose rows differ, sorted or not
   */
  void update(NeighbourRows before, NeighbourRows after, int[] changedRows) {
    growTo(after.nodeCount());
    for (int target : changedRows) {
      int dOld = target < before.nodeCount() ? before.degree(target) : 0;
      scratchOld = ensure(scratchOld, dOld);
      if (dOld > 0) {
        before.copyRow(target, scratchOld, 0);
      }
      int dNew = after.degree(target);
      scratchNew = ensure(scratchNew, dNew);
      after.copyRow(target, scratchNew, 0);
      // Both rows are strictly increasing: one merge finds what left and what came.
      int a = 0;
      int b = 0;
      while (a < dOld || b < dNew) {
        int x = a < dOld ? scratchOld[a] : Integer.MAX_VALUE;
        int y = b < dNew ? scratchNew[b] : Integer.MAX_VALUE;
        if (x == y) {
          a++;
          b++;
        } else if (x < y) {
          remove(x, target);
          a++;
        } else {
          add(y, target);
          b++;
        }
      }
    }
  }

  private void growTo(int n) {
    if (n > lists.length) {
      int capacity = Math.max(n, lists.length + (lists.length >> 1));
      int old = lists.length;
      lists = Arrays.copyOf(lists, capacity);
      sizes = Arrays.copyOf(sizes, capacity);
      Arrays.fill(lists, old, capacity, EMPTY);
    }
    nodeCount = Math.max(nodeCount, n);
  }

  private void add(int source, int target) {
    int s = sizes[source];
    if (s == lists[source].length) {
      lists[source] = Arrays.copyOf(lists[source], Math.max(4, s + (s >> 1) + 1));
    }
    lists[source][s] = target;
    sizes[source] = s + 1;
  }

  private void remove(int source, int target) {
    int[] list = lists[source];
    int s = sizes[source];
    for (int k = 0; k < s; k++) {
      if (list[k] == target) {
        list[k] = list[s - 1];
        sizes[source] = s - 1;
        return;
      }
    }
    throw new IllegalStateException(
        "out-neighbour index out of step: " + target + " was not listed under " + source);
  }

  private static int[] ensure(int[] buffer, int length) {
    return buffer.length >= length ? buffer : new int[Math.max(length, buffer.length * 2)];
  }
}
