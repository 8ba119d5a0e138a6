package dev.heed.live;

/**
 * What one applied batch changed: the version it produced and the nodes whose in-neighbour rows or
 * features changed, which are exactly the targets an incremental scorer must refresh first (their
 * own inputs changed; nodes that attend to them change only through them). Newly added nodes are
 * always included. An edge added and removed again within the batch, or features set to the values
 * they had (bit for bit), count as no change.
 *
 * <p>Node lists are sorted, without repeats; the accessors return copies (O(k)).
 *
 * <p>Thread safety: immutable.
 */
public final class BatchResult {

  private final long version;
  private final int[] changedRows;
  private final int[] changedFeatures;
  private final int[] changedNodes;
  private final int nodesAdded;
  private final long entriesAdded;
  private final long entriesRemoved;

  BatchResult(
      long version,
      int[] changedRows,
      int[] changedFeatures,
      int nodesAdded,
      long entriesAdded,
      long entriesRemoved) {
    this.version = version;
    this.changedRows = changedRows;
    this.changedFeatures = changedFeatures;
    this.changedNodes = union(changedRows, changedFeatures);
    this.nodesAdded = nodesAdded;
    this.entriesAdded = entriesAdded;
    this.entriesRemoved = entriesRemoved;
  }

  /**
   * Returns the version the batch produced; {@link VersionedGraph#snapshot()} returns this version
   * or a later one from now on.
   *
   * @return the version, at least 1
   */
  public long version() {
    return version;
  }

  /**
   * Returns the nodes whose in-neighbour rows or features changed: the union of {@link
   * #changedRows()} and {@link #changedFeatures()}.
   *
   * @return a new sorted array of node indices
   */
  public int[] changedNodes() {
    return changedNodes.clone();
  }

  /**
   * Returns the number of nodes {@link #changedNodes()} holds, without copying.
   *
   * @return the count
   */
  public int changedNodeCount() {
    return changedNodes.length;
  }

  /**
   * Returns the targets whose in-neighbour rows changed (with {@link
   * dev.heed.graph.DirectionPolicy#SYMMETRISE}, both ends of each changed edge), and every node the
   * batch added (its row is new, even when empty).
   *
   * @return a new sorted array of node indices
   */
  public int[] changedRows() {
    return changedRows.clone();
  }

  /**
   * Returns the nodes whose features changed (set for the first time or replaced by other values).
   *
   * @return a new sorted array of node indices
   */
  public int[] changedFeatures() {
    return changedFeatures.clone();
  }

  /**
   * Returns how many nodes the batch added; they have the highest indices of the new version.
   *
   * @return the count
   */
  public int nodesAdded() {
    return nodesAdded;
  }

  /**
   * Returns how many row entries the batch added (a symmetrised edge adds two, a policy self-loop
   * one).
   *
   * @return the count
   */
  public long entriesAdded() {
    return entriesAdded;
  }

  /**
   * Returns how many row entries the batch removed.
   *
   * @return the count
   */
  public long entriesRemoved() {
    return entriesRemoved;
  }

  int[] sharedChangedRows() {
    return changedRows;
  }

  int[] sharedChangedFeatures() {
    return changedFeatures;
  }

  int[] sharedChangedNodes() {
    return changedNodes;
  }

  private static int[] union(int[] a, int[] b) {
    int[] out = new int[a.length + b.length];
    int i = 0;
    int j = 0;
    int w = 0;
    while (i < a.length || j < b.length) {
      int x = i < a.length ? a[i] : Integer.MAX_VALUE;
      int y = j < b.length ? b[j] : Integer.MAX_VALUE;
      int next = Math.min(x, y);
      if (x == next) {
        i++;
      }
      if (y == next) {
        j++;
      }
      out[w++] = next;
    }
    return w == out.length ? out : java.util.Arrays.copyOf(out, w);
  }

  @Override
  public String toString() {
    return "BatchResult[version="
        + version
        + ", changed nodes="
        + changedNodes.length
        + ", nodes added="
        + nodesAdded
        + ", entries +"
        + entriesAdded
        + " -"
        + entriesRemoved
        + "]";
  }
}
