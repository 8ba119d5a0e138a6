package dev.heed.live;

import java.util.ArrayList;
import java.util.BitSet;
import java.util.List;

/**
 * The nodes that batches changed while a compaction runs, so that it can carry them over to the new
 * base. Writers append each committed batch's lists (O(1), under the graph's write lock); the
 * compaction takes them under the same lock (O(1)) and sorts them out after releasing it. Not
 * thread safe on its own.
 */
final class ChangeLog {

  private List<int[]> rows = new ArrayList<>();
  private List<int[]> features = new ArrayList<>();
  private long pending;

  void record(BatchResult result) {
    rows.add(result.sharedChangedRows());
    features.add(result.sharedChangedFeatures());
    pending += result.sharedChangedRows().length + result.sharedChangedFeatures().length;
  }

  /**
   * Returns how many node entries were recorded since the last {@link #take()}, repeats counted.
   */
  long pending() {
    return pending;
  }

  /** Returns what was recorded since the last call and starts afresh. */
  Taken take() {
    Taken taken = new Taken(rows, features);
    rows = new ArrayList<>();
    features = new ArrayList<>();
    pending = 0;
    return taken;
  }

  /** Lists taken from the log; {@link #nodes()} merges them. */
  static final class Taken {
    private final List<int[]> rows;
    private final List<int[]> features;

    private Taken(List<int[]> rows, List<int[]> features) {
      this.rows = rows;
      this.features = features;
    }

    /** Returns the changed rows [0] and features [1], each sorted and without repeats. */
    int[][] nodes() {
      return new int[][] {unique(rows), unique(features)};
    }

    private static int[] unique(List<int[]> lists) {
      BitSet nodes = new BitSet();
      for (int[] list : lists) {
        for (int node : list) {
          nodes.set(node);
        }
      }
      return nodes.stream().toArray();
    }
  }
}
