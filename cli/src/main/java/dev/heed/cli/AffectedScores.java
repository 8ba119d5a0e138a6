package dev.heed.cli;

import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodePrediction;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveScore;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * The one place {@code heed replay} gets fresh scores after a batch: given the new snapshot, it
 * returns the nodes whose scores may have changed and their exact scores.
 *
 * <p><b>Scores</b> come from an {@link IncrementalScorer} that follows the live graph: it keeps
 * every node's layer outputs and, refreshed after each batch with no work budget, recomputes only
 * the nodes the batch reached, so every score is exact for the batch's version (equal to a
 * whole-graph pass to float rounding). A model with full self-attention is refused by the scorer
 * (every update changes every score); for it, every node is scored again on each snapshot by
 * receptive field ({@link NodeClassifier#classifyFromRows}), and {@link #incremental()} says so.
 *
 * <p><b>Which nodes.</b> The refresh's report lists the nodes it gave new scores ({@link
 * RefreshReport#refreshedNodeIndices()}): with no work budget and nothing pending before, exactly
 * the nodes whose receptive field the batch changed, the only ones whose scores may have moved.
 *
 * <p>Cost per batch: the scorer's refresh (O(Σ degree) over the rows it recomputes), plus
 * O(classes) per affected node read. With full self-attention: a pass over every node.
 *
 * <p>Thread safety: not thread safe; one replay owns it.
 */
final class AffectedScores implements AutoCloseable {

  /**
   * The result of one refresh.
   *
   * @param affected the affected nodes, increasing
   * @param scores their fresh scores, in the same order
   * @param refreshAffected the nodes the refresh made pending ({@link
   *     RefreshReport#affectedNodes()}; every node with full self-attention)
   * @param refreshed the nodes given new scores ({@link RefreshReport#refreshedNodes()}; every node
   *     with full self-attention)
   */
  record Refreshed(int[] affected, List<NodeScore> scores, int refreshAffected, int refreshed) {}

  private final NodeClassifier classifier; // null when incremental
  private final IncrementalScorer<String> scorer; // null with full self-attention

  /**
   * Starts from the live graph's current version, whose scores the caller already has; the scorer
   * follows the graph from there.
   *
   * @param model the model
   * @param options classify options (path)
   * @param live the live graph, open, at the version to start from
   */
  AffectedScores(AttentionModel model, ClassifyOptions options, VersionedGraph<String> live) {
    if (model.needsEveryNode()) {
      this.classifier = NodeClassifier.of(model, options);
      this.scorer = null;
    } else {
      this.classifier = null;
      this.scorer =
          IncrementalScorer.create(
              model,
              live,
              RefreshOptions.defaults()
                  .withPath(options.path())
                  .withWorkBudget(RefreshOptions.UNLIMITED));
    }
  }

  /**
   * Returns whether scores come from the incremental scorer; false for a model with full
   * self-attention, scored whole on every snapshot.
   */
  boolean incremental() {
    return scorer != null;
  }

  /**
   * Moves to the version a batch produced and scores the nodes it affected.
   *
   * @param snapshot the graph's latest version, which the batch produced
   * @return the affected nodes and their fresh scores
   * @throws IllegalStateException if {@code snapshot} is not the graph's latest version, or a score
   *     is not fresh after the refresh
   */
  Refreshed refresh(LiveSnapshot<String> snapshot) {
    if (scorer == null) {
      int n = snapshot.nodeCount();
      int[] every = new int[n];
      Arrays.setAll(every, i -> i);
      List<NodeScore> scores = new ArrayList<>(n);
      if (n > 0) {
        for (NodePrediction p :
            classifier.classifyFromRows(snapshot, snapshot, every).predictions()) {
          scores.add(NodeScore.of(p));
        }
      }
      return new Refreshed(every, scores, n, n);
    }
    RefreshReport report = scorer.refresh();
    if (report.version() != snapshot.version()) {
      throw new IllegalStateException(
          "the incremental scorer reflects version "
              + report.version()
              + " but the replay is at version "
              + snapshot.version()
              + "; only the replay may apply batches to its live graph");
    }
    if (report.pendingNodes() > 0) {
      throw new IllegalStateException(
          report.pendingNodes()
              + " nodes are pending after a refresh without a work budget; this is a bug in the"
              + " incremental scorer");
    }
    int[] affected = report.refreshedNodeIndices();
    List<NodeScore> scores = new ArrayList<>(affected.length);
    for (int node : affected) {
      LiveScore<String> s = scorer.score(snapshot.nodes().idOf(node));
      if (!s.isFresh()) {
        throw new IllegalStateException(
            "node '"
                + s.node()
                + "' is "
                + s.state()
                + " at version "
                + s.version()
                + " after a refresh without a work budget; every node of a replay has features,"
                + " so this is a bug in the incremental scorer");
      }
      scores.add(new NodeScore(node, s.topClass(), s.topLabel().orElseThrow(), s.probabilities()));
    }
    return new Refreshed(affected, scores, report.affectedNodes(), report.refreshedNodes());
  }

  /** Stops the scorer following the graph. */
  @Override
  public void close() {
    if (scorer != null) {
      scorer.close();
    }
  }
}
