package dev.heed.examples;

import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.live.BatchResult;
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
 * exactly what the update reached and leaves nothing pending. It reports counts, not nodes, so this
 * class walks the same set to know whose scores to read: with L attention layers, a node's output
 * reads the previous layer at itself and its in-neighbours; so new features at a node reach the
 * nodes up to L hops downstream of it (the nodes that attend to it, and so on), and a changed row
 * (an edge added or removed, a new node) reaches L − 1 hops. Downstream is the reverse of the rows,
 * kept here as lists of targets per source and updated from the rows each update changed.
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
  private final int hops;
  private int[][] targets;
  private int[] targetCounts;
  private LiveSnapshot<String> seen;

  /**
   * Starts at the live graph's current version; the scorer follows the graph from there.
   *
   * @param model the model
   * @param options classify options (path; explanations for the full self-attention path)
   * @param live the live graph
   */
  LiveScores(AttentionModel model, ClassifyOptions options, VersionedGraph<String> live) {
    this.hops = (int) model.layers().stream().filter(l -> l.attentionHeads() > 0).count();
    LiveSnapshot<String> start = live.snapshot();
    this.seen = start;
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
    int n = start.nodeCount();
    targets = new int[n][];
    targetCounts = new int[n];
    int[] row = new int[0];
    for (int target = 0; target < n; target++) {
      row = readRow(start, target, row);
      for (int k = 0, d = start.degree(target); k < d; k++) {
        link(row[k], target);
      }
    }
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
   * Moves to {@code snapshot}, the graph's latest version, which {@code batch} produced, and scores
   * the nodes it may have changed.
   *
   * @return their scores in increasing node order (empty when none is affected)
   */
  List<Score> refresh(LiveSnapshot<String> snapshot, BatchResult batch) {
    int n = snapshot.nodeCount();
    List<Score> scores = new ArrayList<>();
    if (scorer == null) {
      seen = snapshot;
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
    int[] changedRows = batch.changedRows();
    relink(snapshot, changedRows);
    boolean[] affected = new boolean[n];
    spread(batch.changedFeatures(), hops, affected);
    spread(changedRows, Math.max(hops - 1, 0), affected);
    seen = snapshot;
    for (int node = 0; node < n; node++) {
      if (affected[node]) {
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

  /** Marks the seeds and every node up to {@code steps} hops downstream, level by level. */
  private void spread(int[] seeds, int steps, boolean[] affected) {
    int[] level = seeds.clone();
    boolean[] reached = new boolean[affected.length];
    for (int seed : seeds) {
      reached[seed] = true;
      affected[seed] = true;
    }
    for (int step = 0; step < steps && level.length > 0; step++) {
      int[] next = new int[16];
      int size = 0;
      for (int node : level) {
        for (int k = 0; k < targetCounts[node]; k++) {
          int t = targets[node][k];
          if (!reached[t]) {
            reached[t] = true;
            affected[t] = true;
            if (size == next.length) {
              next = Arrays.copyOf(next, size * 2);
            }
            next[size++] = t;
          }
        }
      }
      level = Arrays.copyOf(next, size);
    }
  }

  /** Updates the downstream lists from the rows that changed between {@link #seen} and now. */
  private void relink(LiveSnapshot<String> now, int[] changedRows) {
    if (now.nodeCount() > targets.length) {
      int old = targets.length;
      targets = Arrays.copyOf(targets, Math.max(now.nodeCount(), old * 3 / 2 + 1));
      targetCounts = Arrays.copyOf(targetCounts, targets.length);
    }
    int[] before = new int[0];
    int[] after = new int[0];
    for (int target : changedRows) {
      int oldDegree = target < seen.nodeCount() ? seen.degree(target) : 0;
      if (oldDegree > 0) {
        before = readRow(seen, target, before);
      }
      after = readRow(now, target, after);
      int newDegree = now.degree(target);
      for (int k = 0; k < oldDegree; k++) {
        if (Arrays.binarySearch(after, 0, newDegree, before[k]) < 0) {
          unlink(before[k], target);
        }
      }
      for (int k = 0; k < newDegree; k++) {
        if (Arrays.binarySearch(before, 0, oldDegree, after[k]) < 0) {
          link(after[k], target);
        }
      }
    }
  }

  private void link(int source, int target) {
    int[] list = targets[source];
    int count = targetCounts[source];
    if (list == null || count == list.length) {
      targets[source] = list = list == null ? new int[4] : Arrays.copyOf(list, count * 2);
    }
    list[count] = target;
    targetCounts[source] = count + 1;
  }

  private void unlink(int source, int target) {
    int[] list = targets[source];
    int last = --targetCounts[source];
    for (int k = 0; k <= last; k++) {
      if (list[k] == target) {
        list[k] = list[last];
        return;
      }
    }
    throw new IllegalStateException(target + " was not downstream of " + source);
  }

  private static int[] readRow(dev.heed.graph.NeighbourRows rows, int target, int[] buffer) {
    int d = rows.degree(target);
    int[] into = buffer.length >= d ? buffer : new int[Math.max(d, buffer.length * 2)];
    rows.copyRow(target, into, 0);
    return into;
  }
}
