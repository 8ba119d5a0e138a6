package dev.heed.graph;

import java.util.Arrays;
import java.util.Objects;

/**
 * Subgraph extraction and neighbourhood collection on {@link CsrGraph}s, for scoring a few nodes of
 * a large graph online. All operations cost time and memory proportional to the part of the graph
 * they touch, not to n (no per-call array of size n).
 *
 * <p>Thread safety: stateless; safe to call from many threads.
 */
public final class Subgraphs {

  private Subgraphs() {}

  /**
   * Returns the subgraph induced by a node set: its nodes, and every entry of the original graph
   * between two of them. Local ids follow the original order (see {@link Subgraph}). Cost: O(k log
   * k + Σ deg(v) · log k) over the kept nodes v.
   *
   * @param graph input, not modified
   * @param nodes input, not modified: original node ids, in any order; repeats are ignored
   * @return the induced subgraph with its id map
   * @throws IllegalArgumentException naming the index and value if a node is out of range
   * @throws NullPointerException if an argument is null
   */
  public static Subgraph induced(CsrGraph graph, int[] nodes) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(nodes, "nodes");
    int n = graph.nodeCount();
    for (int k = 0; k < nodes.length; k++) {
      if (nodes[k] < 0 || nodes[k] >= n) {
        throw new IllegalArgumentException(
            "nodes["
                + k
                + "] = "
                + nodes[k]
                + " is not a node of the graph (ids run over 0.."
                + (n - 1)
                + ")");
      }
    }
    return inducedOnSorted(graph, sortedDistinct(nodes));
  }

  private static int[] sortedDistinct(int[] nodes) {
    int[] sorted = nodes.clone();
    Arrays.sort(sorted);
    int w = 0;
    for (int k = 0; k < sorted.length; k++) {
      if (w == 0 || sorted[k] != sorted[w - 1]) {
        sorted[w++] = sorted[k];
      }
    }
    return w == sorted.length ? sorted : Arrays.copyOf(sorted, w);
  }

  private static Subgraph inducedOnSorted(CsrGraph graph, int[] kept) {
    int k = kept.length;
    int[] offsets = new int[k + 1];
    int count = 0;
    for (int a = 0; a < k; a++) {
      int row = kept[a];
      for (int e = graph.rowStart(row); e < graph.rowEnd(row); e++) {
        if (Arrays.binarySearch(kept, graph.column(e)) >= 0) {
          count++;
        }
      }
      offsets[a + 1] = count;
    }
    int[] columns = new int[count];
    int w = 0;
    for (int a = 0; a < k; a++) {
      int row = kept[a];
      for (int e = graph.rowStart(row); e < graph.rowEnd(row); e++) {
        int local = Arrays.binarySearch(kept, graph.column(e));
        if (local >= 0) {
          columns[w++] = local; // increasing, since rows and the local order are sorted
        }
      }
    }
    return new Subgraph(CsrGraph.adopt(offsets, columns), kept);
  }

  /**
   * Returns the k-hop in-neighbourhood of a set of target nodes: every node from which a path of at
   * most {@code hops} edges leads to a target (the targets themselves included). These are the
   * nodes whose features can influence a target's output after {@code hops} attention layers. Cost:
   * O(Σ deg) over the nodes collected, plus a sort of the result.
   *
   * @param graph input, not modified
   * @param targets input, not modified: node ids; repeats are ignored
   * @param hops the number of layers, at least 0 (0 returns the targets)
   * @return a new sorted array of distinct node ids
   * @throws IllegalArgumentException if {@code hops} is negative or a target is out of range
   * @throws NullPointerException if an argument is null
   */
  public static int[] inNeighbourhood(CsrGraph graph, int[] targets, int hops) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(targets, "targets");
    if (hops < 0) {
      throw new IllegalArgumentException("hops must be at least 0, got " + hops);
    }
    int n = graph.nodeCount();
    IntHashSet seen = new IntHashSet(Math.max(16, targets.length * 4));
    int[] frontier = new int[Math.max(targets.length, 1)];
    int frontierSize = 0;
    for (int k = 0; k < targets.length; k++) {
      int t = targets[k];
      if (t < 0 || t >= n) {
        throw new IllegalArgumentException(
            "targets["
                + k
                + "] = "
                + t
                + " is not a node of the graph (ids run over 0.."
                + (n - 1)
                + ")");
      }
      if (seen.add(t)) {
        frontier[frontierSize++] = t;
      }
    }
    for (int hop = 0; hop < hops && frontierSize > 0; hop++) {
      int[] next = new int[16];
      int nextSize = 0;
      for (int f = 0; f < frontierSize; f++) {
        int row = frontier[f];
        for (int e = graph.rowStart(row); e < graph.rowEnd(row); e++) {
          int source = graph.column(e);
          if (seen.add(source)) {
            if (nextSize == next.length) {
              next = Arrays.copyOf(next, next.length * 2);
            }
            next[nextSize++] = source;
          }
        }
      }
      frontier = next;
      frontierSize = nextSize;
    }
    int[] result = seen.toArray();
    Arrays.sort(result);
    return result;
  }

  /**
   * Returns the subgraph induced by the {@code hops}-hop in-neighbourhood of the targets. Running
   * {@code hops} message-passing or attention layers on it gives the targets the same outputs as on
   * the whole graph: every node within {@code hops - 1} hops keeps all its in-edges (only the
   * outermost ring loses some, and its outputs do not reach the targets in time).
   *
   * @param graph input, not modified
   * @param targets input, not modified: node ids; repeats are ignored
   * @param hops the number of layers, at least 0
   * @return the subgraph with its id map; {@code localId(t)} finds each target
   * @throws IllegalArgumentException if {@code hops} is negative or a target is out of range
   * @throws NullPointerException if an argument is null
   */
  public static Subgraph inNeighbourhoodSubgraph(CsrGraph graph, int[] targets, int hops) {
    return inducedOnSorted(graph, inNeighbourhood(graph, targets, hops));
  }

  /** Open-addressing set of non-negative ints; -1 marks an empty slot. Not thread safe. */
  private static final class IntHashSet {
    private int[] slots;
    private int size;

    IntHashSet(int expected) {
      slots = new int[ObjectIdTable.tableCapacity(expected)];
      Arrays.fill(slots, -1);
    }

    boolean add(int value) {
      int mask = slots.length - 1;
      int slot = ObjectIdTable.spread(value) & mask;
      while (slots[slot] >= 0) {
        if (slots[slot] == value) {
          return false;
        }
        slot = (slot + 1) & mask;
      }
      slots[slot] = value;
      size++;
      if (2 * size > slots.length) {
        int[] old = slots;
        slots = new int[old.length * 2];
        Arrays.fill(slots, -1);
        int m = slots.length - 1;
        for (int v : old) {
          if (v >= 0) {
            int s = ObjectIdTable.spread(v) & m;
            while (slots[s] >= 0) {
              s = (s + 1) & m;
            }
            slots[s] = v;
          }
        }
      }
      return true;
    }

    int[] toArray() {
      int[] out = new int[size];
      int w = 0;
      for (int v : slots) {
        if (v >= 0) {
          out[w++] = v;
        }
      }
      return out;
    }
  }
}
