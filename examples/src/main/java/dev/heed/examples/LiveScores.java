package dev.heed.examples;

import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveScore;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.ScoreState;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * The one place {@link ScoringService} gets fresh scores after an update: given the new snapshot
 * and what the update changed, the scores of every node whose score may have changed, each exact
 * for the new version or marked pending.
 *
 * <p>The scores come from an {@link IncrementalScorer} that follows the live graph and keeps every
 * node's layer outputs; it is refreshed after each update with no work budget, so it recomputes
 * exactly what the update reached and leaves nothing pending. Its report lists the nodes it gave
 * new scores ({@link RefreshReport#refreshedNodeIndices()}), which are the nodes whose scores may
 * have changed, so this class reads just those.
 *
 * <p>A model with full self-attention is refused by the scorer (every update changes every score);
 * for it every node is scored again by receptive field on the snapshot (with explanations), equal
 * to a whole-graph pass to float rounding.
 *
 * <p>Thread safety: not thread safe; the service calls it under its update lock.
 */
final class LiveScores implements AutoCloseable {

  /**
   * One node's score after an update.
   *
   * @param node the node's index
   * @param state fresh, or pending (the scorer has not recomputed it yet)
   * @param labelIndex the top class; -1 when pending
   * @param label the top class's label; null when pending
   * @param probabilities every class's probability; empty when pending
   * @param explained the classifier's prediction with explanations, or null when the score came
   *     from the incremental scorer (which keeps no attention weights)
   */
  record Score(
      int node,
      ScoreState state,
      int labelIndex,
      String label,
      float[] probabilities,
      NodePrediction explained) {

    /** A fresh score from the classifier, explanations included. */
    static Score of(NodePrediction p) {
      return new Score(p.node(), ScoreState.FRESH, p.labelIndex(), p.label(), p.probabilities(), p);
    }

    /** The probability of the top class. */
    float probability() {
      return probabilities[labelIndex];
    }
  }

  private final NodeClassifier classifier; // null when incremental
  private final IncrementalScorer<String> scorer; // null with full self-attention

  /**
   * Starts at the live graph's current version; the scorer follows the graph from there.
   *
   * @param model the model
   * @param options classify options (path; explanations for the full self-attention path)
   * @param live the live graph
   */
  LiveScores(AttentionModel model, ClassifyOptions options, VersionedGraph<String> live) {
    if (model.needsEveryNode()) {
      this.classifier = NodeClassifier.of(model, options);
      this.scorer = null;
      return;
    }
    this.classifier = null;
    this.scorer =
        IncrementalScorer.create(
            model,
            live,
            RefreshOptions.defaults()
                .withPath(options.path())
                .withWorkBudget(RefreshOptions.UNLIMITED));
  }

  /** Whether scores come from the incremental scorer (false with full self-attention). */
  boolean incremental() {
    return scorer != null;
  }

  /**
   * A live graph holding {@code graph} and {@code features} exactly (same node indices, same rows),
   * growing by {@code policies} from then on.
   */
  static VersionedGraph<String> load(
      IndexedGraph<String> graph, NodeFeatures features, GraphPolicies policies) {
    VersionedGraph<String> live =
        VersionedGraph.builder(features.featureCount())
            .direction(policies.direction())
            .selfLoops(policies.selfLoops())
            .duplicates(policies.duplicates())
            .build();
    UpdateBatch<String> all = live.newBatch();
    int n = graph.graph().nodeCount();
    for (int node = 0; node < n; node++) {
      float[] x = new float[features.featureCount()];
      features.copyRow(node, x, 0);
      all.addNode(graph.nodes().idOf(node), x);
    }
    int[] row = new int[0];
    for (int target = 0; target < n; target++) {
      row = readRow(graph.graph(), target, row);
      for (int k = 0, d = graph.graph().degree(target); k < d; k++) {
        int source = row[k];
        boolean policyLoop = source == target && policies.selfLoops() == SelfLoopPolicy.ADD;
        boolean otherHalf = source > target && policies.direction() == DirectionPolicy.SYMMETRISE;
        if (!policyLoop && !otherHalf) {
          all.addEdge(graph.nodes().idOf(source), graph.nodes().idOf(target));
        }
      }
    }
    live.apply(all);
    live.compact();
    return live;
  }

  /**
   * Moves to {@code snapshot}, the graph's latest version, which the last update produced, and
   * scores the nodes it may have changed.
   *
   * @return their scores in increasing node order (empty when none is affected)
   */
  List<Score> refresh(LiveSnapshot<String> snapshot) {
    int n = snapshot.nodeCount();
    List<Score> scores = new ArrayList<>();
    if (scorer == null) {
      int[] every = new int[n];
      Arrays.setAll(every, i -> i);
      for (NodePrediction p :
          classifier.classifyFromRows(snapshot, snapshot, every).predictions()) {
        scores.add(Score.of(p));
      }
      return scores;
    }
    RefreshReport report = scorer.refresh();
    if (report.version() != snapshot.version()) {
      throw new IllegalStateException(
          "the incremental scorer reflects version "
              + report.version()
              + ", the service's table version "
              + snapshot.version());
    }
    for (int node : report.refreshedNodeIndices()) {
      LiveScore<String> s = scorer.score(snapshot.nodes().idOf(node));
      scores.add(
          s.isFresh()
              ? new Score(
                  node,
                  ScoreState.FRESH,
                  s.topClass(),
                  s.topLabel().orElseThrow(),
                  s.probabilities(),
                  null)
              : new Score(node, s.state(), -1, null, new float[0], null));
    }
    return scores;
  }

  /** Stops the scorer following the graph. */
  @Override
  public void close() {
    if (scorer != null) {
      scorer.close();
    }
  }

  private static int[] readRow(dev.heed.graph.NeighbourRows rows, int target, int[] buffer) {
    int d = rows.degree(target);
    int[] into = buffer.length >= d ? buffer : new int[Math.max(d, buffer.length * 2)];
    rows.copyRow(target, into, 0);
    return into;
  }
}
