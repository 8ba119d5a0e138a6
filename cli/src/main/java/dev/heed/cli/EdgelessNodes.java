package dev.heed.cli;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.NodeIndex;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;

/**
 * Adds nodes without edges to a graph read from an edge list: the ids a features file names that
 * the edge list never mentions. They become nodes {@code n..n+k-1}, each with a self-loop when
 * self-loops are added (so a GAT layer sees the node's own features, as for every other node) or
 * with no entries otherwise. Other rows are unchanged.
 */
final class EdgelessNodes {

  private EdgelessNodes() {}

  /** The graph with k more rows. Cost O(n + E). */
  static CsrGraph extend(CsrGraph graph, int k, boolean selfLoops) {
    if (k == 0) {
      return graph;
    }
    int n = graph.nodeCount();
    int e = graph.edgeCount();
    int[] offsets = Arrays.copyOf(graph.rowOffsets(), n + k + 1);
    int[] columns = Arrays.copyOf(graph.columns(), Math.addExact(e, selfLoops ? k : 0));
    for (int i = 0; i < k; i++) {
      offsets[n + i + 1] = offsets[n + i] + (selfLoops ? 1 : 0);
      if (selfLoops) {
        columns[e + i] = n + i;
      }
    }
    return CsrGraph.of(offsets, columns);
  }

  /** The node index with {@code extra} ids appended as nodes {@code n..n+k-1}. */
  static NodeIndex<String> extend(NodeIndex<String> base, List<String> extra) {
    if (extra.isEmpty()) {
      return base;
    }
    Map<String, Integer> added = new HashMap<>();
    for (int i = 0; i < extra.size(); i++) {
      added.put(extra.get(i), base.size() + i);
    }
    List<String> ids = List.copyOf(extra);
    return new NodeIndex<>() {
      @Override
      public int size() {
        return base.size() + ids.size();
      }

      @Override
      public String idOf(int index) {
        Objects.checkIndex(index, size());
        return index < base.size() ? base.idOf(index) : ids.get(index - base.size());
      }

      @Override
      public int indexOf(String id) {
        int i = base.indexOf(id);
        return i >= 0 ? i : added.getOrDefault(Objects.requireNonNull(id, "id"), -1);
      }
    };
  }
}
