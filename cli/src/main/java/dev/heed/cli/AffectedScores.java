package dev.heed.cli;

import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodePrediction;
import dev.heed.live.BatchResult;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveScore;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.Layer;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

/**
 * The one place {@code heed replay} gets fresh scores after a batch: given the new snapshot and
 * what the batch changed, it returns the nodes whose scores may have changed and their exact
 * scores.
 *
 * <p><b>Scores</b> come from an {@link IncrementalScorer} that follows the live graph: it keeps
 * every node's layer outputs and, refreshed after each batch with no work budget, recomputes only
 * the nodes the batch reached, so every score is exact for the batch's version (equal to a
 * whole-graph pass to float rounding). A model with full self-attention is refused by the scorer
 * (every update changes every score); for it, every node is scored again on each snapshot by
 * receptive field ({@link NodeClassifier#classifyFromRows}), and {@link #incremental()} says so.
 *
 * <p><b>Which nodes.</b> The scorer reports how many nodes it recomputed, not which, so this class
 * walks the same set to know whose scores to read. An attention layer's output at node {@code i}
 * reads its own row and the previous layer's outputs at {@code i} and its in-neighbours; per-node
 * layers read node {@code i} only. So with L attention layers, a node whose features changed
 * changes the outputs of every node within L hops downstream (along out-edges: the nodes whose rows
 * hold it, and so on), and a node whose row changed (an edge added or removed, or the node is new)
 * those within L − 1 hops. Hops are taken in the new version: a path that a removal cut still has
 * its last cut edge's target, whose row changed, downstream of the cut.
 *
 * <p>Cost per batch: the scorer's refresh (O(Σ degree) over the rows it recomputes), plus O(Σ
 * out-degree) over the affected set's first L − 1 (or L) hops and the rows the changed rows had and
 * have, plus O(classes) per affected node read. With full self-attention: a pass over every node.
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
  private final int attentionLayers;
  private final OutNeighbours downstream;
  private LiveSnapshot<String> current;
  private int[] hopsLeft = new int[0];
  private int[] queue = new int[0];

  /**
   * Starts from the live graph's current version, whose scores the caller already has; the scorer
   * follows the graph from there.
   *
   * @param model the model
   * @param options classify options (path)
   * @param live the live graph, open, at the version to start from
   */
  AffectedScores(AttentionModel model, ClassifyOptions options, VersionedGraph<String> live) {
    int attention = 0;
    for (Layer layer : model.layers()) {
      attention += layer.attentionHeads() > 0 ? 1 : 0;
    }
    this.attentionLayers = attention;
    this.current = live.snapshot();
    if (model.needsEveryNode()) {
      this.classifier = NodeClassifier.of(model, options);
      this.scorer = null;
      this.downstream = null;
    } else {
      this.classifier = null;
      this.scorer =
          IncrementalScorer.create(
              model,
              live,
              RefreshOptions.defaults()
                  .withPath(options.path())
                  .withWorkBudget(RefreshOptions.UNLIMITED));
      this.downstream = new OutNeighbours(current);
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
   * @param snapshot the graph's latest version, which {@code batch} produced
   * @param batch what the batch changed
   * @return the affected nodes and their fresh scores
   * @throws IllegalStateException if {@code snapshot} is not the graph's latest version, or a score
   *     is not fresh after the refresh
   */
  Refreshed refresh(LiveSnapshot<String> snapshot, BatchResult batch) {
    if (scorer == null) {
      int n = snapshot.nodeCount();
      int[] every = new int[n];
      Arrays.setAll(every, i -> i);
      current = snapshot;
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
    downstream.update(current, snapshot, batch.changedRows());
    int[] affected = affected(batch.changedFeatures(), batch.changedRows(), snapshot.nodeCount());
    current = snapshot;
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

  /**
   * Breadth-first along out-edges: feature changes reach L hops, row changes L − 1; each node is
   * queued again only when reached with more hops left than before.
   */
  private int[] affected(int[] featureSeeds, int[] rowSeeds, int n) {
    if (hopsLeft.length < n) {
      hopsLeft = new int[Math.max(n, hopsLeft.length + (hopsLeft.length >> 1))];
      queue = new int[hopsLeft.length];
    }
    Arrays.fill(hopsLeft, 0, n, -1);
    int tail = 0;
    int rowHops = Math.max(attentionLayers - 1, 0);
    for (int seed : rowSeeds) {
      hopsLeft[seed] = rowHops;
      queue[tail++] = seed;
    }
    for (int seed : featureSeeds) {
      if (hopsLeft[seed] < 0) {
        queue[tail++] = seed;
      }
      hopsLeft[seed] = Math.max(hopsLeft[seed], attentionLayers);
    }
    int[] seen = new int[tail];
    System.arraycopy(queue, 0, seen, 0, tail);
    int count = tail;
    int head = 0;
    int[] pending = queue;
    // Each round hands on one hop; a node reached again with more hops left goes round again.
    while (head < tail) {
      int node = pending[head++];
      int left = hopsLeft[node];
      if (left <= 0) {
        continue;
      }
      for (int k = 0; k < downstream.size(node); k++) {
        int next = downstream.get(node, k);
        if (hopsLeft[next] < left - 1) {
          if (hopsLeft[next] < 0) {
            if (count == seen.length) {
              seen = Arrays.copyOf(seen, Math.max(16, count * 2));
            }
            seen[count++] = next;
          }
          hopsLeft[next] = left - 1;
          if (tail == pending.length) {
            pending = Arrays.copyOf(pending, pending.length * 2);
            queue = pending;
          }
          pending[tail++] = next;
        }
      }
    }
    int[] out = Arrays.copyOf(seen, count);
    Arrays.sort(out);
    return out;
  }
}
