package dev.heed.graph;

import java.util.Arrays;

/**
 * How {@link CsrGraph#withLocalityOrder} numbers nodes internally so that rows read together sit
 * together in memory. The graph's own ids never change: a kernel that finds a {@link NodeLayout} on
 * a graph runs its rows, and stores its copies of node rows, in layout order, and writes every
 * result at the caller's id.
 *
 * <p>Both orders are computed once per graph, in O(n + E) time plus sorting (see each constant),
 * and the layout keeps a renumbered copy of the rows ({@code 4·(n + 1) + 4·E} bytes).
 *
 * <p>Thread safety: an enum; immutable.
 */
public enum LocalityOrder {

  /**
   * Nodes by how many rows read them (their out-degree as sources), most read first, ties by id:
   * the rows read most often share cache lines, pages and the caches' sets (degree sorting, a
   * long-standing baseline in the reordering literature; compared with other orders in Wei, Yu, Lu
   * and Lin, "Speedup Graph Processing by Graph Ordering", SIGMOD 2016). O(n + E) (a counting
   * sort).
   */
  DEGREE,

  /**
   * Reverse Cuthill–McKee (Cuthill &amp; McKee, "Reducing the bandwidth of sparse symmetric
   * matrices", ACM National Conference 1969; reversed as George 1971 proposed) over the graph with
   * directions ignored: a breadth-first numbering from a least-connected node, each node's new
   * neighbours taken in order of increasing degree, then reversed. Rows that are numbered close
   * together read sources numbered close together, so consecutive rows reuse cached node rows. O(n
   * + E·log d) time (sorting each node's new neighbours), and 8·E bytes of scratch for the
   * undirected adjacency.
   */
  REVERSE_CUTHILL_MCKEE;

  /**
   * Computes the order: the node at each position.
   *
   * @param graph the graph, not modified
   * @return a permutation of {@code 0..n-1}: entry p is the node placed at position p
   */
  int[] order(CsrGraph graph) {
    return switch (this) {
      case DEGREE -> byReadCount(graph);
      case REVERSE_CUTHILL_MCKEE -> reverseCuthillMcKee(graph);
    };
  }

  private static int[] byReadCount(CsrGraph graph) {
    int n = graph.nodeCount();
    int[] reads = new int[n];
    for (int e = 0, end = graph.edgeCount(); e < end; e++) {
      reads[graph.column(e)]++;
    }
    return countingSortDescending(reads);
  }

  /** Nodes by key, largest first, ties by id (a stable counting sort). */
  private static int[] countingSortDescending(int[] key) {
    int max = 0;
    for (int k : key) {
      max = Math.max(max, k);
    }
    int[] start = new int[max + 2];
    for (int k : key) {
      start[max - k + 1]++;
    }
    for (int b = 1; b < start.length; b++) {
      start[b] += start[b - 1];
    }
    int[] order = new int[key.length];
    for (int v = 0; v < key.length; v++) {
      order[start[max - key[v]]++] = v;
    }
    return order;
  }

  private static int[] reverseCuthillMcKee(CsrGraph graph) {
    int n = graph.nodeCount();
    // the undirected adjacency A + A^T without self-loops (a pair linked both ways appears twice)
    int[] degree = new int[n];
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i), end = graph.rowEnd(i); e < end; e++) {
        int j = graph.column(e);
        if (j != i) {
          degree[i]++;
          degree[j]++;
        }
      }
    }
    int[] start = new int[n + 1];
    for (int v = 0; v < n; v++) {
      start[v + 1] = start[v] + degree[v];
    }
    int[] adjacent = new int[start[n]];
    int[] fill = Arrays.copyOf(start, n);
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i), end = graph.rowEnd(i); e < end; e++) {
        int j = graph.column(e);
        if (j != i) {
          adjacent[fill[i]++] = j;
          adjacent[fill[j]++] = i;
        }
      }
    }
    // components are started from their least connected unnumbered node (common practice; a
    // pseudo-peripheral search would cost more passes)
    int[] byDegree = countingSortDescending(degree);
    int[] order = new int[n];
    boolean[] numbered = new boolean[n];
    long[] newcomers = new long[16];
    int head = 0;
    int tail = 0;
    for (int s = n - 1; s >= 0; s--) {
      int root = byDegree[s];
      if (numbered[root]) {
        continue;
      }
      numbered[root] = true;
      order[tail++] = root;
      while (head < tail) {
        int u = order[head++];
        int found = 0;
        for (int a = start[u], end = start[u + 1]; a < end; a++) {
          int w = adjacent[a];
          if (!numbered[w]) {
            numbered[w] = true;
            if (found == newcomers.length) {
              newcomers = Arrays.copyOf(newcomers, 2 * found);
            }
            newcomers[found++] = ((long) degree[w] << 32) | w;
          }
        }
        Arrays.sort(newcomers, 0, found);
        for (int f = 0; f < found; f++) {
          order[tail++] = (int) newcomers[f];
        }
      }
    }
    assert tail == n;
    for (int a = 0, b = n - 1; a < b; a++, b--) {
      int t = order[a];
      order[a] = order[b];
      order[b] = t;
    }
    return order;
  }
}
