package dev.heed.graph;

import java.util.ArrayList;
import java.util.List;
import java.util.TreeSet;

/**
 * A plain reference for the builders: a sorted set per row, filled edge by edge straight from the
 * definitions of the policies. Slow, obviously right.
 */
final class NaiveCsr {

  private NaiveCsr() {}

  static CsrGraph build(
      int[] sources, int[] targets, int n, SelfLoopPolicy selfLoops, DirectionPolicy direction) {
    List<TreeSet<Integer>> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      rows.add(new TreeSet<>());
      if (selfLoops == SelfLoopPolicy.ADD) {
        rows.get(i).add(i);
      }
    }
    for (int k = 0; k < sources.length; k++) {
      rows.get(targets[k]).add(sources[k]);
      if (direction == DirectionPolicy.SYMMETRISE) {
        rows.get(sources[k]).add(targets[k]);
      }
    }
    int[] offsets = new int[n + 1];
    List<Integer> cols = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      cols.addAll(rows.get(i));
      offsets[i + 1] = cols.size();
    }
    return CsrGraph.of(offsets, cols.stream().mapToInt(Integer::intValue).toArray());
  }

  /** Whether the edge list repeats an edge (for REJECT), under the direction policy. */
  static boolean hasDuplicate(int[] sources, int[] targets, DirectionPolicy direction) {
    TreeSet<Long> seen = new TreeSet<>();
    for (int k = 0; k < sources.length; k++) {
      int s = sources[k];
      int t = targets[k];
      if (direction == DirectionPolicy.SYMMETRISE && s > t) {
        int tmp = s;
        s = t;
        t = tmp;
      }
      if (!seen.add(((long) s << 32) | t)) {
        return true;
      }
    }
    return false;
  }
}
