package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.live.BatchResult;
import dev.heed.live.CompactedSnapshot;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.jgrapht.Graph;
import org.jgrapht.generate.NamedGraphGenerator;
import org.jgrapht.graph.DefaultEdge;
import org.jgrapht.graph.SimpleGraph;
import org.jgrapht.util.SupplierUtil;
import org.junit.jupiter.api.Test;

/**
 * The seam of {@code heed replay} is exact: after every batch of random changes, its scores for the
 * affected nodes (from the incremental scorer, or from receptive-field scoring of every node for a
 * model with full self-attention) equal a whole-graph pass over the new version, and every node
 * outside the affected set has the same whole-graph score as before the batch (which checks that
 * the set misses nothing), and the affected set equals a breadth-first walk of the new version's
 * out-edges from what the batch changed, done here independently. Graphs: random directed and
 * symmetrised graphs, and Zachary's karate club (W. W. Zachary, "An information flow model for
 * conflict and fission in small groups", Journal of Anthropological Research 33(4), 1977; structure
 * from JGraphT's NamedGraphGenerator).
 */
class AffectedScoresTest {

  private static final List<String> FEATURES = List.of("f0", "f1", "f2", "f3");
  private static final List<String> LABELS = List.of("red", "green", "blue");
  private static final ClassifyOptions SPARSE =
      ClassifyOptions.defaults().withPath(PathChoice.SPARSE);

  @Test
  void randomDirectedGraph() {
    GraphPolicies policies =
        new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.AS_GIVEN, DuplicatePolicy.MERGE);
    SplittableRandom random = new SplittableRandom(41);
    checkReplay(randomGraph(120, 300, policies, random), random, 25, 71, 12);
  }

  @Test
  void randomSymmetrisedGraph() {
    GraphPolicies policies = GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS;
    SplittableRandom random = new SplittableRandom(42);
    checkReplay(randomGraph(150, 260, policies, random), random, 25, 72, 12);
  }

  @Test
  void zacharyKarateClub() {
    Graph<Integer, DefaultEdge> karate =
        new SimpleGraph<>(
            SupplierUtil.createIntegerSupplier(), SupplierUtil.DEFAULT_EDGE_SUPPLIER, false);
    new NamedGraphGenerator<Integer, DefaultEdge>().generateZacharyKarateClubGraph(karate);
    assertEquals(34, karate.vertexSet().size()); // Zachary 1977: 34 members
    assertEquals(78, karate.edgeSet().size()); // Zachary 1977: 78 ties
    SplittableRandom random = new SplittableRandom(43);
    VersionedGraph<String> live = empty(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
    UpdateBatch<String> batch = live.newBatch();
    List<Integer> members = new ArrayList<>(karate.vertexSet());
    members.sort(null);
    for (int m : members) {
      batch.addNode("member-" + m, features(random));
    }
    for (DefaultEdge e : karate.edgeSet()) {
      batch.addEdge("member-" + karate.getEdgeSource(e), "member-" + karate.getEdgeTarget(e));
    }
    live.apply(batch);
    assertEquals(34 + 2 * 78, live.snapshot().edgeCount());
    // A small world: two hops from most changes reach nearly every member.
    checkReplay(live, random, 30, 73, 1);
  }

  /** A model attending over every node makes every node affected. */
  @Test
  void modelOverEveryNodeMakesEveryNodeAffected() throws Exception {
    java.nio.file.Path dir = java.nio.file.Files.createTempDirectory("affected");
    try {
      AttentionModel mixed = dev.heed.model.ModelFile.read(CliFixtures.mixedModel(dir));
      SplittableRandom random = new SplittableRandom(44);
      VersionedGraph<String> live = empty(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS, 5);
      UpdateBatch<String> batch = live.newBatch();
      for (int i = 0; i < 20; i++) {
        batch.addNode("n" + i, features(random, 5));
      }
      for (int i = 0; i < 20; i++) {
        batch.addEdge("n" + i, "n" + ((i + 1) % 20));
      }
      live.apply(batch);
      AffectedScores seam = new AffectedScores(mixed, SPARSE, live);
      assertFalse(seam.incremental(), "the incremental scorer refuses full self-attention");
      BatchResult result = live.apply(live.newBatch().addEdge("n0", "n10"));
      AffectedScores.Refreshed fresh = seam.refresh(live.snapshot());
      assertEquals(20, fresh.affected().length);
      assertEquals(20, fresh.refreshAffected());
      assertEquals(20, fresh.refreshed());
      assertClose(wholePass(mixed, live.snapshot()), fresh.scores(), fresh.affected(), "mixed");
      live.close();
    } finally {
      try (var files = java.nio.file.Files.list(dir)) {
        for (java.nio.file.Path p : files.toList()) {
          java.nio.file.Files.delete(p);
        }
      }
      java.nio.file.Files.delete(dir);
    }
  }

  private static void checkReplay(
      VersionedGraph<String> live,
      SplittableRandom random,
      int batches,
      long modelSeed,
      int minPartial) {
    AttentionModel model = LiveFixtures.threeLayerModel(FEATURES, LABELS, modelSeed);
    AffectedScores seam = new AffectedScores(model, SPARSE, live);
    assertTrue(seam.incremental(), "a model without full self-attention is scored incrementally");
    Classification before = wholePass(model, live.snapshot());
    int untouchedSeen = 0;
    int partial = 0;
    for (int b = 0; b < batches; b++) {
      LiveSnapshot<String> old = live.snapshot();
      BatchResult result = live.apply(randomBatch(live, old, random, b));
      LiveSnapshot<String> now = live.snapshot();
      AffectedScores.Refreshed fresh = seam.refresh(now);
      Classification after = wholePass(model, now);
      String where = "batch " + b + " (" + result + ")";
      assertClose(after, fresh.scores(), fresh.affected(), where);
      assertArrayEquals(
          downstreamOf(model, now, result), fresh.affected(), where + ": the affected set");
      assertEquals(
          fresh.affected().length,
          fresh.refreshAffected(),
          where + ": the incremental scorer affected the same nodes");
      assertEquals(fresh.refreshAffected(), fresh.refreshed(), where + ": nothing left pending");
      boolean[] affected = new boolean[now.nodeCount()];
      for (int node : fresh.affected()) {
        affected[node] = true;
      }
      for (int changed : result.changedNodes()) {
        assertTrue(affected[changed], where + ": changed node " + changed + " is affected");
      }
      for (int node = 0; node < old.nodeCount(); node++) {
        if (!affected[node]) {
          untouchedSeen++;
          assertProbabilities(
              before.forNode(node).probabilities(),
              after.forNode(node).probabilities(),
              where + ", unaffected node " + node);
        }
      }
      partial += fresh.affected().length < now.nodeCount() ? 1 : 0;
      before = after;
    }
    assertTrue(
        untouchedSeen > 0 && partial >= minPartial,
        "the affected sets left nodes out in " + partial + " of " + batches + " batches");
    seam.close();
    live.close();
  }

  /**
   * The nodes whose scores the batch may change, walked here from scratch: with L attention layers,
   * new features reach the nodes up to L hops downstream (along out-edges of {@code now}), a
   * changed row L − 1 hops.
   */
  private static int[] downstreamOf(
      AttentionModel model, LiveSnapshot<String> now, BatchResult batch) {
    int layers = (int) model.layers().stream().filter(l -> l.attentionHeads() > 0).count();
    int n = now.nodeCount();
    List<List<Integer>> out = new ArrayList<>();
    for (int v = 0; v < n; v++) {
      out.add(new ArrayList<>());
    }
    for (int target = 0; target < n; target++) {
      int[] row = new int[now.degree(target)];
      now.copyRow(target, row, 0);
      for (int source : row) {
        out.get(source).add(target);
      }
    }
    int[] hopsLeft = new int[n];
    Arrays.fill(hopsLeft, -1);
    for (int v : batch.changedRows()) {
      hopsLeft[v] = Math.max(hopsLeft[v], layers - 1);
    }
    for (int v : batch.changedFeatures()) {
      hopsLeft[v] = Math.max(hopsLeft[v], layers);
    }
    for (int round = 0; round < layers; round++) {
      int[] next = hopsLeft.clone();
      for (int v = 0; v < n; v++) {
        for (int t : out.get(v)) {
          next[t] = Math.max(next[t], hopsLeft[v] - 1);
        }
      }
      hopsLeft = next;
    }
    int[] reached = new int[n];
    int count = 0;
    for (int v = 0; v < n; v++) {
      if (hopsLeft[v] >= 0) {
        reached[count++] = v;
      }
    }
    return Arrays.copyOf(reached, count);
  }

  /** Adds and removes edges, sometimes adds a node with edges or sets a node's features. */
  private static UpdateBatch<String> randomBatch(
      VersionedGraph<String> live, LiveSnapshot<String> now, SplittableRandom random, int b) {
    UpdateBatch<String> batch = live.newBatch();
    int n = now.nodeCount();
    int adds = 1 + random.nextInt(3);
    for (int k = 0; k < adds; k++) {
      batch.addEdge(now.nodes().idOf(random.nextInt(n)), now.nodes().idOf(random.nextInt(n)));
    }
    if (random.nextInt(2) == 0) {
      // Remove an entry some row holds, other than a self-loop the policy keeps.
      for (int attempt = 0; attempt < 20; attempt++) {
        int target = random.nextInt(n);
        int[] row = new int[now.degree(target)];
        now.copyRow(target, row, 0);
        int source = row.length == 0 ? target : row[random.nextInt(row.length)];
        if (source != target || (row.length > 0 && live.selfLoops() == SelfLoopPolicy.AS_GIVEN)) {
          if (row.length > 0) {
            batch.removeEdge(now.nodes().idOf(source), now.nodes().idOf(target));
            break;
          }
        }
      }
    }
    if (b % 4 == 1) {
      String id = "new-" + b;
      batch.addNode(id, features(random));
      batch.addEdge(now.nodes().idOf(random.nextInt(n)), id);
      batch.addEdge(id, now.nodes().idOf(random.nextInt(n)));
    }
    if (b % 3 == 2) {
      batch.setFeatures(now.nodes().idOf(random.nextInt(n)), features(random));
    }
    return batch;
  }

  private static VersionedGraph<String> randomGraph(
      int n, int edges, GraphPolicies policies, SplittableRandom random) {
    VersionedGraph<String> live = empty(policies);
    UpdateBatch<String> batch = live.newBatch();
    for (int i = 0; i < n; i++) {
      batch.addNode("v" + i, features(random));
    }
    for (int e = 0; e < edges; e++) {
      batch.addEdge("v" + random.nextInt(n), "v" + random.nextInt(n));
    }
    live.apply(batch);
    return live;
  }

  private static VersionedGraph<String> empty(GraphPolicies policies) {
    return empty(policies, FEATURES.size());
  }

  private static VersionedGraph<String> empty(GraphPolicies policies, int featureCount) {
    return VersionedGraph.builder(featureCount)
        .direction(policies.direction())
        .selfLoops(policies.selfLoops())
        .duplicates(policies.duplicates())
        .backgroundCompaction(false)
        .build();
  }

  private static float[] features(SplittableRandom random) {
    return features(random, FEATURES.size());
  }

  private static float[] features(SplittableRandom random, int f) {
    float[] x = new float[f];
    for (int k = 0; k < f; k++) {
      x[k] = (float) (2 * random.nextDouble() - 1);
    }
    return x;
  }

  private static Classification wholePass(AttentionModel model, LiveSnapshot<String> snapshot) {
    CompactedSnapshot<String> whole = snapshot.compacted();
    return NodeClassifier.of(model, SPARSE).classify(whole.graph(), whole.features());
  }

  private static void assertClose(
      Classification whole, List<NodeScore> seam, int[] affected, String where) {
    assertArrayEquals(
        affected,
        seam.stream().mapToInt(NodeScore::node).toArray(),
        where + ": one score per affected node, in order");
    for (NodeScore p : seam) {
      assertProbabilities(
          whole.forNode(p.node()).probabilities(), p.probabilities(), where + ", node " + p.node());
    }
  }

  /** Relative error 1e-5 against the whole-graph pass, with a floor for tiny probabilities. */
  private static void assertProbabilities(float[] expected, float[] actual, String where) {
    assertEquals(expected.length, actual.length, where);
    for (int c = 0; c < expected.length; c++) {
      double tolerance = 1e-5 * Math.max(Math.abs(expected[c]), 1e-3);
      assertEquals(
          expected[c],
          actual[c],
          tolerance,
          where + ", class " + c + ": " + Arrays.toString(actual));
    }
  }
}
