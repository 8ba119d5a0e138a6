package dev.heed.classify;

import static dev.heed.classify.ReceptiveFieldClassifierTest.CLASSES;
import static dev.heed.classify.ReceptiveFieldClassifierTest.FEATURES;
import static dev.heed.classify.ReceptiveFieldClassifierTest.OPTIONS;
import static dev.heed.classify.ReceptiveFieldClassifierTest.TOLERANCE;
import static dev.heed.classify.ReceptiveFieldClassifierTest.assertMatchesWholePass;
import static dev.heed.classify.ReceptiveFieldClassifierTest.features;
import static dev.heed.classify.ReceptiveFieldClassifierTest.gatGatv2Dense;
import static dev.heed.classify.ReceptiveFieldClassifierTest.highestDegree;
import static dev.heed.classify.ReceptiveFieldClassifierTest.randomTargets;
import static dev.heed.classify.ReceptiveFieldClassifierTest.relativeError;
import static dev.heed.classify.ReceptiveFieldClassifierTest.rmat;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.MemoryBudget;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.live.LiveScoringChecks;
import dev.heed.model.AttentionModel;
import dev.heed.model.FieldCap;
import dev.heed.model.FieldSize;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import dev.heed.model.ReceptiveFieldTooLargeException;
import dev.heed.model.TestModels;
import java.util.ArrayList;
import java.util.HashSet;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Random;
import java.util.Set;
import java.util.concurrent.Callable;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import org.junit.jupiter.api.Test;

/**
 * Scoring with kept hub rows ({@link StaticGraphScorer}) against a pass over the whole graph, on
 * the float64 reference kernel. The fact under test: an attention layer's output at v depends only
 * on its input at v and v's in-neighbours, so a node's layer output computed once (in a pass over
 * the hubs' receptive field) can stand in for its in-neighbourhood in any later field. Graphs:
 * R-MAT graphs ({@link dev.heed.graph.generate.RmatGenerator}: Chakrabarti, Zhan, Faloutsos,
 * "R-MAT: A Recursive Model for Graph Mining", SDM 2004, Graph500 initiator), directed and
 * symmetrised, and Zachary's karate club (W. W. Zachary, "An Information Flow Model for Conflict
 * and Fission in Small Groups", Journal of Anthropological Research 33(4), 1977, via JGraphT).
 * Models and features are fresh seeded Gaussian values. Tolerance: 1e-5 norm-wise relative error
 * per node.
 */
class StaticGraphScorerTest {

  @Test
  void keptRowsGiveTheWholeGraphPassOnRmatGraphs() {
    Random random = new Random(20261204L);
    for (int round = 0; round < 4; round++) {
      ReceptiveFieldClassifierTest.RmatRound r =
          ReceptiveFieldClassifierTest.RmatRound.next(random, round);
      CsrGraph graph = r.graph();
      int n = graph.nodeCount();
      for (int hubDegree : new int[] {1, 3, 8, 32, 1 << 20}) {
        for (ClassifyOptions options : List.of(OPTIONS, OPTIONS.withoutExplanations())) {
          StaticGraphScorer scorer =
              NodeClassifier.of(r.model(), options).forStaticGraph(graph, r.features(), hubDegree);
          for (int count : new int[] {1, 4, 40}) {
            int[] targets = randomTargets(random, n, count);
            String where =
                r.name()
                    + ", T "
                    + hubDegree
                    + (options.explain() ? ", explained" : "")
                    + ", "
                    + count
                    + " targets";
            Classification result = scorer.classify(targets);
            if (options.explain()) {
              assertMatchesWholePass(result, r.whole(), 3, where);
            } else {
              assertProbabilities(result, r.whole(), where);
            }
            assertEquals(
                expectedSize(graph, targets, hubDegree, options.explain()),
                result.fieldSize(),
                where);
          }
        }
      }
    }
  }

  private static void assertProbabilities(Classification result, ModelOutput whole, String where) {
    for (NodePrediction p : result.predictions()) {
      double error = relativeError(whole.row(p.node()), p.probabilities());
      assertTrue(error <= TOLERANCE, where + ", node " + p.node() + ": relative error " + error);
    }
  }

  /**
   * The field a model of two attention layers (then per-node layers) plans with rows of in-degree
   * at least {@code t} kept, restated: the last attention layer computes the targets that are not
   * looked up; every computed row's sources are kept (read from the kept rows) or computed by the
   * layer before; the first layer reads the features of every node met.
   */
  private static FieldSize expectedSize(
      CsrGraph graph, int[] targets, int t, boolean computeTargets) {
    Set<Integer> lastComputed = new LinkedHashSet<>();
    Set<Integer> kept = new HashSet<>();
    for (int v : targets) {
      if (!computeTargets && graph.degree(v) >= t) {
        kept.add(v);
      } else {
        lastComputed.add(v);
      }
    }
    // hop 1: the last attention layer's rows; hop 2: the first layer's (the targets' and their
    // sources that are not kept), whose sources are read
    Set<Integer> rows = lastComputed;
    Set<Integer> reached = rows;
    long entries = 0;
    for (int hop = 1; hop <= 2; hop++) {
      reached = new HashSet<>(rows);
      for (int v : rows) {
        entries += graph.degree(v);
        for (int k = graph.rowStart(v); k < graph.rowEnd(v); k++) {
          int u = graph.column(k);
          if (graph.degree(u) >= t && !lastComputed.contains(u)) {
            kept.add(u);
          } else {
            reached.add(u);
          }
        }
      }
      rows = reached;
    }
    int targetCount = (int) java.util.Arrays.stream(targets).distinct().count();
    return new FieldSize(targetCount, reached.size() + kept.size(), entries, false, kept.size());
  }

  @Test
  void aQueryIsBoundedByTheThresholdAndAHubTargetIsALookup() {
    Random random = new Random(41L);
    CsrGraph graph = rmat(11, 8, 41L, true);
    int n = graph.nodeCount();
    NodeFeatures features = features(n, random);
    AttentionModel model = gatGatv2Dense(41L);
    int t = 16;
    NodeClassifier classifier = NodeClassifier.of(model, OPTIONS.withoutExplanations());
    StaticGraphScorer scorer = classifier.forStaticGraph(graph, features, t);
    int hubs = 0;
    for (int v = 0; v < n; v++) {
      hubs += graph.degree(v) >= t ? 1 : 0;
    }
    assertEquals(hubs, scorer.keptRowCount());
    assertTrue(hubs > 10, "hubs: " + hubs);
    // 4 bytes per node, and per hub the first layer's 12 outputs and the 4 probabilities
    assertEquals(4L * n + 4L * hubs * (12 + CLASSES), scorer.keptBytes());
    long worst = 0;
    for (int v = 0; v < n; v++) {
      FieldSize size = scorer.classify(v).fieldSize();
      if (graph.degree(v) >= t) {
        assertEquals(new FieldSize(1, 1, 0, false, 1), size, "hub " + v);
      } else {
        assertTrue(size.entries() < t + (long) t * t, "node " + v + ": " + size);
        worst = Math.max(worst, size.entries());
      }
    }
    int hub = highestDegree(graph);
    long plain = classifier.classify(graph, features, hub).fieldSize().entries();
    assertTrue(plain > worst, "the hub's own field " + plain + " vs the worst bounded " + worst);
    assertEquals(t, scorer.minHubDegree());
    assertTrue(scorer.toString().contains("in-degree >= 16"), scorer.toString());
  }

  @Test
  void theKarateClubWithItsHubsKept() {
    int[][] ties = LiveScoringChecks.karateEdges();
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(ties[0], ties[1], 34)
            .direction(DirectionPolicy.SYMMETRISE)
            .selfLoops(SelfLoopPolicy.ADD)
            .build();
    Random random = new Random(1977L);
    NodeFeatures features = features(34, random);
    AttentionModel model = gatGatv2Dense(1977L);
    ModelOutput whole = model.forward(graph, features.shared(), PathChoice.SPARSE, true);
    int[] everyone = new int[34];
    java.util.Arrays.setAll(everyone, i -> i);
    for (int t : new int[] {2, 5, 10}) {
      for (ClassifyOptions options : List.of(OPTIONS, OPTIONS.withoutExplanations())) {
        StaticGraphScorer scorer =
            NodeClassifier.of(model, options).forStaticGraph(graph, features, t);
        assertTrue(scorer.keptRowCount() > 0);
        for (int v = 0; v < 34; v++) {
          Classification one = scorer.classify(v);
          String where = "karate, T " + t + ", member " + v;
          if (options.explain()) {
            assertMatchesWholePass(one, whole, 3, where);
          } else {
            assertProbabilities(one, whole, where);
          }
        }
        assertProbabilities(scorer.classify(everyone), whole, "karate, T " + t + ", everyone");
      }
    }
  }

  @Test
  void perNodeLayersBeforeTheFirstAttentionLayerAndDenseOnlyModels() {
    Random random = new Random(55L);
    CsrGraph graph = rmat(9, 6, 55L, false);
    NodeFeatures features = features(graph.nodeCount(), random);
    AttentionModel before =
        TestModels.withReferenceKernel(
            RandomModels.start(55L, FEATURES)
                .dense("embed", 6, "relu")
                .graphAttention("gat", "gat", 2, 3, true, "elu", true, "identity")
                .dense("between", 5, "elu")
                .graphAttention("gatv2", "gatv2", 2, 4, false, "relu", false, "linear")
                .graphAttention("third", "gat", 1, 4, true, "identity", true, "none")
                .dense("out", CLASSES, "identity")
                .softmax(CLASSES));
    ModelOutput whole = before.forward(graph, features.shared(), PathChoice.SPARSE, true);
    for (ClassifyOptions options : List.of(OPTIONS, OPTIONS.withoutExplanations())) {
      StaticGraphScorer scorer =
          NodeClassifier.of(before, options).forStaticGraph(graph, features, 6);
      for (int round = 0; round < 10; round++) {
        int[] targets = randomTargets(random, graph.nodeCount(), 1 + random.nextInt(6));
        Classification result = scorer.classify(targets);
        if (options.explain()) {
          assertMatchesWholePass(result, whole, 3, "three attention layers");
        } else {
          assertProbabilities(result, whole, "three attention layers");
        }
        assertTrue(result.fieldSize().keptRows() <= result.fieldSize().nodes());
      }
    }
    AttentionModel perNode =
        TestModels.withReferenceKernel(
            RandomModels.start(56L, FEATURES)
                .dense("hidden", 5, "relu")
                .dense("out", CLASSES, "identity")
                .softmax(CLASSES));
    StaticGraphScorer alone =
        NodeClassifier.of(perNode, OPTIONS.withoutExplanations())
            .forStaticGraph(graph, features, 1);
    assertEquals(0, alone.keptRowCount());
    assertEquals(new FieldSize(2, 2, 0, false, 0), alone.classify(9, 2).fieldSize());
    assertProbabilities(
        alone.classify(9, 2),
        perNode.forward(graph, features.shared(), PathChoice.SPARSE, false),
        "per-node layers only");
  }

  @Test
  void repeatedAndMixedTargetsKeepTheirOrder() {
    Random random = new Random(62L);
    CsrGraph graph = rmat(9, 4, 62L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    AttentionModel model = gatGatv2Dense(62L);
    ModelOutput whole = model.forward(graph, features.shared(), PathChoice.SPARSE, false);
    StaticGraphScorer scorer =
        NodeClassifier.of(model, OPTIONS.withoutExplanations()).forStaticGraph(graph, features, 4);
    int hub = highestDegree(graph);
    int leaf = firstWithDegree(graph, 0, 4);
    int[] targets = {hub, leaf, hub, leaf, graph.column(graph.rowStart(hub)), hub};
    Classification result = scorer.classify(targets);
    assertEquals(targets.length, result.predictions().size());
    for (int i = 0; i < targets.length; i++) {
      assertEquals(targets[i], result.predictions().get(i).node());
    }
    assertProbabilities(result, whole, "mixed");
    assertEquals(new FieldSize(0, 0, 0, false, 0), scorer.classify().fieldSize());
  }

  @Test
  void theFieldCapStillApplies() {
    Random random = new Random(71L);
    CsrGraph graph = rmat(9, 6, 71L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    AttentionModel model = gatGatv2Dense(71L);
    int leaf = firstWithDegree(graph, 3, 8);
    StaticGraphScorer capped =
        NodeClassifier.of(
                model, OPTIONS.withoutExplanations().withFieldCap(FieldCap.NONE.withMaxEntries(2)))
            .forStaticGraph(graph, features, 8);
    ReceptiveFieldTooLargeException e =
        assertThrows(ReceptiveFieldTooLargeException.class, () -> capped.classify(leaf));
    assertTrue(e.entriesBound());
    assertEquals(leaf, e.target());
    StaticGraphScorer nodeCapped =
        NodeClassifier.of(
                model, OPTIONS.withoutExplanations().withFieldCap(FieldCap.NONE.withMaxNodes(2)))
            .forStaticGraph(graph, features, 8);
    assertThrows(ReceptiveFieldTooLargeException.class, () -> nodeCapped.classify(leaf));
    // a hub target is one node and no entries: within any cap
    int hub = highestDegree(graph);
    assertEquals(1, nodeCapped.classify(hub).fieldSize().nodes());
  }

  private static int firstWithDegree(CsrGraph graph, int least, int below) {
    int v = 0;
    while (graph.degree(v) < least || graph.degree(v) >= below) {
      v++;
    }
    return v;
  }

  @Test
  void badInputIsRejectedWithTheReason() {
    Random random = new Random(83L);
    CsrGraph graph = rmat(7, 4, 83L, true);
    int n = graph.nodeCount();
    NodeFeatures features = features(n, random);
    NodeClassifier classifier = NodeClassifier.of(gatGatv2Dense(83L), OPTIONS);
    StaticGraphScorer scorer = classifier.forStaticGraph(graph, features, 4);
    IllegalArgumentException range =
        assertThrows(IllegalArgumentException.class, () -> scorer.classify(3, n));
    assertTrue(range.getMessage().contains("node id " + n + " at position 1"), range.getMessage());
    assertThrows(IllegalArgumentException.class, () -> scorer.classify(-1));
    IllegalArgumentException rows =
        assertThrows(
            IllegalArgumentException.class,
            () -> classifier.forStaticGraph(graph, features(n - 1, random), 4));
    assertTrue(rows.getMessage().contains("rows but the graph has " + n), rows.getMessage());
    IllegalArgumentException threshold =
        assertThrows(
            IllegalArgumentException.class, () -> classifier.forStaticGraph(graph, features, 0));
    assertTrue(threshold.getMessage().contains("at least 1"), threshold.getMessage());
    AttentionModel everyNode =
        TestModels.withReferenceKernel(
            RandomModels.start(84L, FEATURES)
                .selfAttention("everyone", true)
                .dense("dense", CLASSES, "identity")
                .softmax(CLASSES));
    IllegalArgumentException complete =
        assertThrows(
            IllegalArgumentException.class,
            () -> NodeClassifier.of(everyNode, OPTIONS).forStaticGraph(graph, features, 4));
    assertTrue(complete.getMessage().contains("'everyone'"), complete.getMessage());
    CsrGraph other = rmat(7, 4, 84L, true);
    AttentionModel model = classifier.model();
    IllegalArgumentException otherGraph =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                model.receptiveField(
                    other,
                    new int[] {0},
                    FieldCap.NONE,
                    model.keepHubRows(graph, features.shared(), 4, PathChoice.SPARSE),
                    false));
    assertTrue(otherGraph.getMessage().contains("another graph"), otherGraph.getMessage());
  }

  @Test
  void theKeptRowsAreCheckedAgainstTheMemoryBudget() {
    Random random = new Random(89L);
    CsrGraph graph = rmat(9, 4, 89L, true);
    int n = graph.nodeCount();
    NodeFeatures features = features(n, random);
    NodeClassifier classifier = NodeClassifier.of(gatGatv2Dense(89L), OPTIONS);
    String before = System.getProperty(MemoryBudget.MAX_BYTES_PROPERTY);
    try {
      // the hub index (4 bytes per node) fits; every row's 12 + 4 outputs (T = 1) do not
      System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, "8k");
      MemoryBudgetExceededException e =
          assertThrows(
              MemoryBudgetExceededException.class,
              () -> classifier.forStaticGraph(graph, features, 1));
      assertTrue(e.getMessage().contains("the kept outputs of " + n + " hub rows"), e.getMessage());
      assertEquals(4L * n * (12 + CLASSES), e.bytesNeeded());
    } finally {
      if (before == null) {
        System.clearProperty(MemoryBudget.MAX_BYTES_PROPERTY);
      } else {
        System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, before);
      }
    }
  }

  @Test
  void sixteenThreadsShareOneScorer() throws Exception {
    Random random = new Random(97L);
    CsrGraph graph = rmat(9, 4, 97L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    StaticGraphScorer scorer =
        NodeClassifier.of(gatGatv2Dense(97L), OPTIONS).forStaticGraph(graph, features, 5);
    List<int[]> targetSets = new ArrayList<>();
    List<Classification> expected = new ArrayList<>();
    for (int s = 0; s < 12; s++) {
      int[] targets = randomTargets(random, graph.nodeCount(), 1 + random.nextInt(8));
      targetSets.add(targets);
      expected.add(scorer.classify(targets));
    }
    ExecutorService pool = Executors.newFixedThreadPool(16);
    try {
      List<Callable<Integer>> tasks = new ArrayList<>();
      for (int task = 0; task < 192; task++) {
        int which = task % targetSets.size();
        tasks.add(
            () -> {
              Classification c = scorer.classify(targetSets.get(which));
              assertEquals(expected.get(which).fieldSize(), c.fieldSize());
              NodeClassifierTest.assertSame(expected.get(which), c, "set " + which);
              return which;
            });
      }
      for (Future<Integer> f : pool.invokeAll(tasks)) {
        f.get();
      }
    } finally {
      pool.shutdownNow();
    }
  }
}
