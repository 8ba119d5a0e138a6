package dev.heed.live;

/**
 * What one {@link IncrementalScorer#refresh()} did: the version it brought the scorer to, how many
 * nodes the new batches affected, how much it recomputed and what is left pending.
 *
 * <p>Thread safety: immutable (the node list is copied out on each call).
 */
public final class RefreshReport {

  private final long previousVersion;
  private final long version;
  private final int batches;
  private final int affectedNodes;
  private final int refreshedNodes;
  private final long rowsComputed;
  private final long entriesComputed;
  private final int pendingNodes;
  private final int[] refreshed;

  RefreshReport(
      long previousVersion,
      long version,
      int batches,
      int affectedNodes,
      int refreshedNodes,
      long rowsComputed,
      long entriesComputed,
      int pendingNodes,
      int[] refreshed) {
    this.previousVersion = previousVersion;
    this.version = version;
    this.batches = batches;
    this.affectedNodes = affectedNodes;
    this.refreshedNodes = refreshedNodes;
    this.rowsComputed = rowsComputed;
    this.entriesComputed = entriesComputed;
    this.pendingNodes = pendingNodes;
    this.refreshed = refreshed;
  }

  /**
   * Returns the version the scorer reflected before this refresh.
   *
   * @return the version
   */
  public long previousVersion() {
    return previousVersion;
  }

  /**
   * Returns the version the scorer reflects now: fresh scores equal a full pass over it.
   *
   * @return the version
   */
  public long version() {
    return version;
  }

  /**
   * Returns how many batches this refresh ingested.
   *
   * @return the count
   */
  public int batches() {
    return batches;
  }

  /**
   * Returns how many nodes the ingested batches made pending: nodes whose probabilities may change
   * (the affected set at the model's last layer). Nodes already pending are not counted again.
   *
   * @return the count
   */
  public int affectedNodes() {
    return affectedNodes;
  }

  /**
   * Returns how many nodes got new final scores in this refresh.
   *
   * @return the count
   */
  public int refreshedNodes() {
    return refreshedNodes;
  }

  /**
   * Returns the nodes that got new final scores in this refresh ({@link #refreshedNodes()} of
   * them), as node indices of the graph at {@link #version()} (map them to ids with {@code
   * snapshot.nodes().idOf(index)}), in increasing order. Each node's score as of {@link #version()}
   * is fresh or {@link ScoreState#NOT_SCORABLE}. Nodes refreshed here are the only ones whose
   * scores may differ from the previous fresh ones. O(refreshed nodes): a new array per call.
   *
   * @return the node indices, increasing; empty when none was refreshed
   */
  public int[] refreshedNodeIndices() {
    return refreshed.clone();
  }

  /**
   * Returns the rows recomputed over all attention stages (a node counts once per stage).
   *
   * @return the count
   */
  public long rowsComputed() {
    return rowsComputed;
  }

  /**
   * Returns the work done: attention entries read by the rows recomputed, plus one per row (the
   * quantity the work budget bounds).
   *
   * @return the count
   */
  public long entriesComputed() {
    return entriesComputed;
  }

  /**
   * Returns how many nodes are still pending after this refresh; 0 when every scorable node is
   * fresh for {@link #version()}.
   *
   * @return the count
   */
  public int pendingNodes() {
    return pendingNodes;
  }

  /**
   * Returns whether nothing is left pending.
   *
   * @return true if {@link #pendingNodes()} is 0
   */
  public boolean isComplete() {
    return pendingNodes == 0;
  }

  @Override
  public String toString() {
    return "RefreshReport[version "
        + previousVersion
        + " -> "
        + version
        + ", batches "
        + batches
        + ", affected "
        + affectedNodes
        + ", refreshed "
        + refreshedNodes
        + ", rows "
        + rowsComputed
        + ", work "
        + entriesComputed
        + ", pending "
        + pendingNodes
        + "]";
  }
}
