package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.live.BatchResult;
import dev.heed.live.LiveSnapshot;
import dev.heed.model.AttentionModel;
import dev.heed.model.Layer;
import java.util.Arrays;

/**
 * The one place {@code heed replay} gets fresh scores after a batch: given the new snapshot and
 * what the batch changed, it returns the nodes whose scores may have changed and their exact
 * scores. An incremental scorer that keeps every node's layer outputs replaces this class and
 * nothing else.
 *
 * <p><b>Which nodes.</b> An attention layer's output at node {@code i} reads its own row and the
 * previous layer's outputs at {@code i} and its in-neighbours; per-node layers read node {@code i}
 * only. So with L attention layers, a node whose features changed changes the outputs of every node
 * within L hops downstream (along out-edges: the nodes whose rows hold it, and so on), and a node
 * whose row changed (an edge added or removed, or the node is new) those within L − 1 hops. Hops
 * are taken in the new version: a path that a removal cut still has its last cut edge's target,
 * whose row changed, downstream of the cut. A model that attends over every node makes every node
 * affected.
 *
 * <p><b>Scores</b> come from receptive-field scoring of the affected nodes on the snapshot ({@link
 * NodeClassifier#classifyFromRows}), equal to a whole-graph pass to float rounding.
 *
 * <p>Cost per batch: O(Σ out-degree) over the affected set's first L − 1 (or L) hops, plus the rows
 * the changed rows had and have, plus scoring their receptive fields.
 *
 * <p>Thread safety: not thread safe; one replay owns it.
 */
final class AffectedScores {

  /**
   * The result of one refresh.
   *
   * @param affected the affected nodes, increasing
   * @param scores their predictions, in the same order
   */
  record Refreshed(int[] affected, Classification scores) {}

  private final NodeClassifier classifier;
  private final int attentionLayers;
  private final boolean everyNode;
  private final OutNeighbours downstream;
  private LiveSnapshot<?> current;
  private int[] hopsLeft = new int[0];
  private int[] queue = new int[0];

  /**
   * Starts from a version whose scores the caller already has.
   *
   * @param model the model
   * @param options classify options (path, explanations)
   * @param start the version to start from
   */
  AffectedScores(AttentionModel model, ClassifyOptions options, LiveSnapshot<?> start) {
    this.classifier = NodeClassifier.of(model, options);
    int attention = 0;
    for (Layer layer : model.layers()) {
      attention += layer.attentionHeads() > 0 ? 1 : 0;
    }
    this.attentionLayers = attention;
    this.everyNode = model.needsEveryNode();
    this.downstream = everyNode ? null : new OutNeighbours(start);
    this.current = start;
  }

  /**
   * Moves to the version a batch produced and scores the nodes it affected.
   *
   * @param snapshot the version {@code batch} produced (or a later one that only it changed)
   * @param batch what the batch changed
   * @return the affected nodes and their fresh scores
   */
  Refreshed refresh(LiveSnapshot<?> snapshot, BatchResult batch) {
    int[] affected;
    if (everyNode) {
      affected = new int[snapshot.nodeCount()];
      Arrays.setAll(affected, i -> i);
    } else {
      downstream.update(current, snapshot, batch.changedRows());
      affected = affected(batch.changedFeatures(), batch.changedRows(), snapshot.nodeCount());
    }
    current = snapshot;
    Classification scores =
        affected.length == 0 ? null : classifier.classifyFromRows(snapshot, snapshot, affected);
    return new Refreshed(affected, scores);
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
