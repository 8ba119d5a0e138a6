package dev.heed.classify;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.NeighbourRows;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.Subgraphs;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.FieldCap;
import dev.heed.model.FieldSize;
import dev.heed.model.LayerAttention;
import dev.heed.model.LayerRun;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import dev.heed.model.ReceptiveFieldTooLargeException;
import dev.heed.model.TestModels;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.List;
import java.util.Random;
import java.util.concurrent.Callable;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.atomic.AtomicInteger;
import org.junit.jupiter.api.Test;

/**
 * Classifying chosen nodes over their receptive field only, against a pass over the whole graph, on
 * the float64 reference kernel. Graphs are R-MAT graphs ({@link RmatGenerator}: Chakrabarti, Zhan,
 * Faloutsos, "R-MAT: A Recursive Model for Graph Mining", SDM 2004, Graph500 initiator), directed
 * and symmetrised; the fact under test is that an L-layer attention model's output at v depends
 * only on v's L-hop in-neighbourhood (each attention layer reads a node's in-neighbours, dense and
 * softmax layers the node alone). Models and features are fresh seeded Gaussian values. Tolerance:
 * 1e-5 norm-wise relative error (largest difference over largest value) per node.
 */
class ReceptiveFieldClassifierTest {

  static final double TOLERANCE = 1e-5;
  static final int FEATURES = 6;
  static final int CLASSES = 4;
  static final ClassifyOptions OPTIONS =
      ClassifyOptions.defaults().withPath(PathChoice.SPARSE).withExplanations(3).withTopLabels(2);

  static CsrGraph rmat(int scale, int edgeFactor, long seed, boolean symmetric) {
    return RmatGenerator.withScale(scale)
        .edgeFactor(edgeFactor)
        .seed(seed)
        .generateEdges()
        .direction(symmetric ? DirectionPolicy.SYMMETRISE : DirectionPolicy.KEEP)
        .selfLoops(SelfLoopPolicy.ADD)
        .build();
  }

  static NodeFeatures features(int n, Random random) {
    float[] values = new float[n * FEATURES];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) random.nextGaussian();
    }
    return NodeFeatures.ofRowMajor(values, n, FEATURES);
  }

  static AttentionModel gatGatv2Dense(long seed) {
    return TestModels.withReferenceKernel(RandomModels.gatGatv2Dense(seed, FEATURES, CLASSES));
  }

  static int[] randomTargets(Random random, int n, int count) {
    int[] t = new int[count];
    for (int i = 0; i < count; i++) {
      t[i] = random.nextInt(n);
    }
    return t;
  }

  /** Largest difference over largest reference value (norm-wise relative error). */
  static double relativeError(float[] expected, float[] actual) {
    assertEquals(expected.length, actual.length);
    double diff = 0;
    double size = 0;
    for (int i = 0; i < expected.length; i++) {
      diff = Math.max(diff, Math.abs((double) expected[i] - actual[i]));
      size = Math.max(size, Math.abs(expected[i]));
    }
    return size == 0 ? diff : diff / size;
  }

  /**
   * Checks predictions and explanations against the whole-graph pass: probabilities within the
   * tolerance; each explanation's k neighbours carry, in the whole pass, the weights of the whole
   * pass's own k best (so ties and rounding may reorder equal weights, nothing else).
   */
  static void assertMatchesWholePass(
      Classification result, ModelOutput whole, int k, String where) {
    for (NodePrediction p : result.predictions()) {
      int node = p.node();
      double error = relativeError(whole.row(node), p.probabilities());
      assertTrue(error <= TOLERANCE, where + ", node " + node + ": relative error " + error);
      List<LayerExplanation> layers = p.explanation().orElseThrow();
      assertEquals(whole.attention().size(), layers.size(), where);
      for (int l = 0; l < layers.size(); l++) {
        LayerAttention a = whole.attention().get(l);
        LayerExplanation ex = layers.get(l);
        assertEquals(a.layerName(), ex.layerName(), where);
        assertTopMatches(a, node, -1, ex.topNeighbours(), k, where + ", layer " + l);
        for (int h = 0; h < ex.heads(); h++) {
          assertTopMatches(
              a, node, h, ex.topNeighbours(h), k, where + ", layer " + l + " head " + h);
        }
      }
    }
  }

  private static void assertTopMatches(
      LayerAttention whole, int node, int head, List<NeighbourWeight> got, int k, String where) {
    int count = whole.sourceCount(node);
    float[] byPosition = new float[count];
    int[] sources = new int[count];
    List<NeighbourWeight> all = new ArrayList<>();
    for (int t = 0; t < count; t++) {
      sources[t] = whole.source(node, t);
      byPosition[t] = head < 0 ? whole.meanWeight(node, t) : whole.weight(node, t, head);
      all.add(new NeighbourWeight(sources[t], byPosition[t]));
    }
    all.sort(
        Comparator.comparingDouble((NeighbourWeight w) -> -w.weight())
            .thenComparingInt(NeighbourWeight::node));
    List<NeighbourWeight> expected = all.subList(0, Math.min(k, all.size()));
    assertEquals(expected.size(), got.size(), where);
    for (int i = 0; i < got.size(); i++) {
      int t = Arrays.binarySearch(sources, got.get(i).node());
      assertTrue(t >= 0, where + ": " + got.get(i).node() + " is not a source of " + node);
      float wholeWeight = byPosition[t];
      assertEquals(expected.get(i).weight(), wholeWeight, TOLERANCE, where + " position " + i);
      assertEquals(wholeWeight, got.get(i).weight(), TOLERANCE * Math.max(wholeWeight, 1e-2f));
    }
  }

  private static int[] distinct(int[] nodes) {
    return Arrays.stream(nodes).distinct().toArray();
  }

  /**
   * One seeded round on an R-MAT graph of 512 nodes (symmetrised on even rounds, directed on odd
   * ones): fresh features and model, and the model's whole-graph pass with attention weights.
   */
  record RmatRound(
      String name, CsrGraph graph, NodeFeatures features, AttentionModel model, ModelOutput whole) {
    static RmatRound next(Random random, int round) {
      long seed = random.nextLong();
      boolean symmetric = round % 2 == 0;
      CsrGraph graph = rmat(9, 4, seed, symmetric);
      NodeFeatures features = ReceptiveFieldClassifierTest.features(graph.nodeCount(), random);
      AttentionModel model = gatGatv2Dense(seed);
      ModelOutput whole = model.forward(graph, features.shared(), PathChoice.SPARSE, true);
      String name = "seed " + seed + (symmetric ? " symmetric" : " directed");
      return new RmatRound(name, graph, features, model, whole);
    }
  }

  @Test
  void chosenNodesMatchTheWholeGraphPassOnRmatGraphs() {
    Random random = new Random(20240611L);
    for (int round = 0; round < 6; round++) {
      RmatRound r = RmatRound.next(random, round);
      CsrGraph graph = r.graph();
      NodeFeatures features = r.features();
      ModelOutput whole = r.whole();
      NodeClassifier classifier = NodeClassifier.of(r.model(), OPTIONS);
      for (int count : new int[] {1, 3, 25}) {
        int[] targets = randomTargets(random, graph.nodeCount(), count);
        String where = r.name() + ", " + count;
        Classification result = classifier.classify(graph, features, targets);
        assertEquals(
            Arrays.stream(targets).boxed().toList(),
            result.predictions().stream().map(NodePrediction::node).toList(),
            where);
        assertMatchesWholePass(result, whole, 3, where);
        assertFieldSize(graph, targets, result, where);
      }
    }
  }

  /**
   * The field of a GAT, GATv2, dense, softmax stack: 2 hops of nodes; layer 0 computes the 1-hop
   * rows over their in-edges, layer 1 the targets' rows.
   */
  private static void assertFieldSize(
      CsrGraph graph, int[] targets, Classification result, String where) {
    int[] oneHop = Subgraphs.inNeighbourhood(graph, targets, 1);
    int[] twoHops = Subgraphs.inNeighbourhood(graph, targets, 2);
    FieldSize size = result.fieldSize();
    assertFalse(size.wholeGraph(), where);
    assertFalse(result.wholeGraph(), where);
    assertEquals(distinct(targets).length, size.targets(), where);
    assertEquals(twoHops.length, size.nodes(), where);
    long entries0 = Arrays.stream(oneHop).mapToLong(graph::degree).sum();
    long entries1 = Arrays.stream(distinct(targets)).mapToLong(graph::degree).sum();
    assertEquals(entries0 + entries1, size.entries(), where);
    List<LayerRun> runs = result.layerRuns();
    assertEquals(4, runs.size(), where);
    assertEquals(twoHops.length, runs.get(0).rowsRead(), where);
    assertEquals(oneHop.length, runs.get(0).rowsComputed(), where);
    assertEquals(entries0, runs.get(0).entries(), where);
    assertEquals(oneHop.length, runs.get(1).rowsRead(), where);
    assertEquals(size.targets(), runs.get(1).rowsComputed(), where);
    assertEquals(entries1, runs.get(1).entries(), where);
    assertEquals(size.targets(), runs.get(3).rowsComputed(), where);
    assertEquals(0, runs.get(3).entries(), where);
    assertTrue(runs.get(0).path().isPresent() && runs.get(2).path().isEmpty(), where);
  }

  @Test
  void rowInterfacesGiveTheSameResultsAsTheCsrGraph() {
    Random random = new Random(31L);
    CsrGraph graph = rmat(9, 6, 31L, false);
    NodeFeatures features = features(graph.nodeCount(), random);
    NodeClassifier classifier = NodeClassifier.of(gatGatv2Dense(31L), OPTIONS);
    int[] targets = randomTargets(random, graph.nodeCount(), 12);
    Classification fromCsr = classifier.classify(graph, features, targets);
    Classification fromRows =
        classifier.classifyFromRows(new Rows(graph), new Features(features), targets);
    assertSame(fromCsr, fromRows, "rows");
    assertEquals(fromCsr.fieldSize(), fromRows.fieldSize());
  }

  @Test
  void aBatchComputesTheUnionOfItsTargetsFieldsOnce() {
    Random random = new Random(5L);
    CsrGraph graph = rmat(9, 4, 5L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    NodeClassifier classifier = NodeClassifier.of(gatGatv2Dense(5L), OPTIONS);
    // Targets that share in-neighbours: a node and some of its in-neighbours.
    int hub = highestDegree(graph);
    int[] targets = {hub, graph.column(graph.rowStart(hub)), graph.column(graph.rowEnd(hub) - 1)};
    Classification batch = classifier.classify(graph, features, targets);
    int separately = 0;
    for (int t : targets) {
      Classification one = classifier.classify(graph, features, t);
      separately += one.fieldSize().nodes();
      double error =
          relativeError(one.forNode(t).probabilities(), batch.forNode(t).probabilities());
      assertTrue(error <= TOLERANCE, "target " + t + ": " + error);
    }
    assertEquals(Subgraphs.inNeighbourhood(graph, targets, 2).length, batch.fieldSize().nodes());
    assertTrue(
        batch.fieldSize().nodes() < separately,
        "union " + batch.fieldSize().nodes() + " vs " + separately + " separately");
  }

  static int highestDegree(CsrGraph graph) {
    int best = 0;
    for (int v = 1; v < graph.nodeCount(); v++) {
      if (graph.degree(v) > graph.degree(best)) {
        best = v;
      }
    }
    return best;
  }

  @Test
  void aNodeCapStopsPlanningBeforeAnyFeatureIsRead() {
    Random random = new Random(8L);
    CsrGraph graph = rmat(9, 6, 8L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    int hub = highestDegree(graph);
    int cap = 30;
    assertTrue(graph.degree(hub) > cap);
    NodeClassifier capped =
        NodeClassifier.of(gatGatv2Dense(8L), OPTIONS.withFieldCap(FieldCap.NONE.withMaxNodes(cap)));
    Rows rows = new Rows(graph);
    Features counted = new Features(features);
    int leaf = leastDegree(graph);
    ReceptiveFieldTooLargeException e =
        assertThrows(
            ReceptiveFieldTooLargeException.class,
            () -> capped.classifyFromRows(rows, counted, leaf, hub));
    assertEquals(0, counted.reads.get(), "no features read");
    assertTrue(rows.reads.get() <= 2, "planning stopped at the hub's row: " + rows.reads.get());
    assertEquals(hub, e.target(), e.getMessage());
    assertFalse(e.entriesBound());
    assertEquals(cap + 1, e.size());
    assertEquals(cap, e.cap());
    String m = e.getMessage();
    assertTrue(m.contains("target " + hub), m);
    assertTrue(m.contains("cap of 30 nodes") && m.contains("31 nodes"), m);
    assertTrue(m.contains("ClassifyOptions.withFieldCap"), m);
    assertTrue(m.contains("layer 'gatv2' (hop 1 of 2)"), m);
    // Under the cap, the same call succeeds.
    NodeClassifier roomy =
        NodeClassifier.of(
            gatGatv2Dense(8L),
            OPTIONS.withFieldCap(
                FieldCap.NONE.withMaxNodes(
                    Subgraphs.inNeighbourhood(graph, new int[] {leaf, hub}, 2).length)));
    assertEquals(2, roomy.classifyFromRows(rows, counted, leaf, hub).predictions().size());
  }

  private static int leastDegree(CsrGraph graph) {
    int best = 0;
    for (int v = 1; v < graph.nodeCount(); v++) {
      if (graph.degree(v) < graph.degree(best)) {
        best = v;
      }
    }
    return best;
  }

  @Test
  void anEntryCapStopsBeforeTheRowThatPassesIt() {
    Random random = new Random(9L);
    CsrGraph graph = rmat(9, 6, 9L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    int hub = highestDegree(graph);
    NodeClassifier capped =
        NodeClassifier.of(
            gatGatv2Dense(9L), OPTIONS.withFieldCap(FieldCap.NONE.withMaxEntries(10)));
    Rows rows = new Rows(graph);
    ReceptiveFieldTooLargeException e =
        assertThrows(
            ReceptiveFieldTooLargeException.class,
            () -> capped.classifyFromRows(rows, new Features(features), hub));
    assertEquals(0, rows.reads.get(), "the hub's row was never copied");
    assertTrue(e.entriesBound());
    assertEquals(graph.degree(hub), e.size());
    assertTrue(e.getMessage().contains("cap of 10 attention entries"), e.getMessage());
    assertTrue(e.getMessage().contains("target " + hub), e.getMessage());
  }

  @Test
  void aModelThatAttendsOverEveryNodeRunsTheWholeGraphAndSaysSo() {
    Random random = new Random(13L);
    CsrGraph graph = rmat(7, 4, 13L, false);
    int n = graph.nodeCount();
    NodeFeatures features = features(n, random);
    AttentionModel model =
        TestModels.withReferenceKernel(
            RandomModels.start(13L, FEATURES)
                .graphAttention("gat", "gat", 2, 3, true, "elu", false, "none")
                .selfAttention("everyone", true)
                .dense("dense", CLASSES, "identity")
                .softmax(CLASSES));
    assertTrue(model.needsEveryNode());
    ModelOutput whole = model.forward(graph, features.shared(), PathChoice.SPARSE, true);
    NodeClassifier classifier = NodeClassifier.of(model, OPTIONS);
    Classification viaCsr = classifier.classify(graph, features, 3, 40);
    Classification viaRows =
        classifier.classifyFromRows(new Rows(graph), new Features(features), 3, 40);
    for (Classification c : List.of(viaCsr, viaRows)) {
      assertTrue(c.wholeGraph());
      assertEquals(new FieldSize(2, n, graph.entryCount() + (long) n * n, true), c.fieldSize());
      assertEquals(n, c.layerRuns().get(1).rowsComputed());
      assertMatchesWholePass(c, whole, 3, "whole");
    }
    ReceptiveFieldTooLargeException e =
        assertThrows(
            ReceptiveFieldTooLargeException.class,
            () ->
                NodeClassifier.of(model, OPTIONS.withFieldCap(FieldCap.NONE.withMaxNodes(n - 1)))
                    .classify(graph, features, 3));
    assertTrue(e.getMessage().contains("needs the whole graph"), e.getMessage());
    assertTrue(e.getMessage().contains("layer 'everyone' attends over every node"), e.getMessage());
    assertEquals(3, e.target());
  }

  @Test
  void graphMaskedSelfAttentionAndDenseOnlyModels() {
    Random random = new Random(17L);
    CsrGraph graph = rmat(8, 4, 17L, false);
    NodeFeatures features = features(graph.nodeCount(), random);
    AttentionModel masked =
        TestModels.withReferenceKernel(
            RandomModels.start(17L, FEATURES)
                .graphAttention("gat", "gat", 2, 3, true, "relu", true, "linear")
                .selfAttention("masked", false)
                .dense("dense", CLASSES, "identity")
                .softmax(CLASSES));
    assertFalse(masked.needsEveryNode());
    int[] targets = randomTargets(random, graph.nodeCount(), 7);
    Classification result = NodeClassifier.of(masked, OPTIONS).classify(graph, features, targets);
    assertMatchesWholePass(
        result,
        masked.forward(graph, features.shared(), PathChoice.SPARSE, true),
        3,
        "masked self-attention");
    assertEquals(Subgraphs.inNeighbourhood(graph, targets, 2).length, result.fieldSize().nodes());

    AttentionModel perNode =
        TestModels.withReferenceKernel(
            RandomModels.start(18L, FEATURES)
                .dense("hidden", 5, "relu")
                .dense("out", CLASSES, "identity")
                .softmax(CLASSES));
    Classification alone =
        NodeClassifier.of(perNode, OPTIONS.withoutExplanations()).classify(graph, features, 9, 2);
    assertEquals(new FieldSize(2, 2, 0, false), alone.fieldSize());
    ModelOutput all = perNode.forward(graph, features.shared(), PathChoice.SPARSE, false);
    assertArrayEquals(all.row(9), alone.forNode(9).probabilities(), 0f);
  }

  @Test
  void isolatedNodesAndRepeatedTargets() {
    Random random = new Random(21L);
    // Directed, self-loops as generated: many nodes attend to nothing, some only to others.
    CsrGraph graph =
        RmatGenerator.withScale(8)
            .edgeFactor(2)
            .seed(21L)
            .generateEdges()
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    NodeFeatures features = features(graph.nodeCount(), random);
    AttentionModel model = gatGatv2Dense(21L);
    ModelOutput whole = model.forward(graph, features.shared(), PathChoice.SPARSE, true);
    int isolated = -1;
    int pointedAt = -1;
    for (int v = 0; v < graph.nodeCount(); v++) {
      if (graph.degree(v) == 0 && isolated < 0) {
        isolated = v;
      }
      if (graph.degree(v) > 0 && !graph.allows(v, v) && pointedAt < 0) {
        pointedAt = v;
      }
    }
    assertTrue(isolated >= 0 && pointedAt >= 0);
    int other = isolated == 0 || pointedAt == 0 ? (isolated == 1 || pointedAt == 1 ? 2 : 1) : 0;
    int[] targets = {isolated, pointedAt, isolated, other, pointedAt, isolated};
    Classification result = NodeClassifier.of(model, OPTIONS).classify(graph, features, targets);
    assertEquals(
        Arrays.stream(targets).boxed().toList(),
        result.predictions().stream().map(NodePrediction::node).toList());
    assertEquals(3, result.fieldSize().targets());
    assertMatchesWholePass(result, whole, 3, "isolated");
    assertArrayEquals(
        result.predictions().get(0).probabilities(),
        result.predictions().get(5).probabilities(),
        0f);
    Classification lonely = NodeClassifier.of(model, OPTIONS).classify(graph, features, isolated);
    assertEquals(new FieldSize(1, 1, 0, false), lonely.fieldSize());
    assertTrue(
        lonely.forNode(isolated).explanation().orElseThrow().get(0).topNeighbours().isEmpty());
  }

  @Test
  void noTargetsGiveNoPredictions() {
    CsrGraph graph = rmat(6, 4, 2L, true);
    Classification none =
        NodeClassifier.of(gatGatv2Dense(2L), OPTIONS)
            .classify(graph, features(graph.nodeCount(), new Random(2L)));
    assertEquals(graph.nodeCount(), none.predictions().size());
    assertTrue(none.wholeGraph());
    Classification empty =
        NodeClassifier.of(gatGatv2Dense(2L), OPTIONS)
            .classify(graph, features(graph.nodeCount(), new Random(2L)), new int[0]);
    assertTrue(empty.predictions().isEmpty());
    assertEquals(new FieldSize(0, 0, 0, false), empty.fieldSize());
  }

  @Test
  void rowsThatBreakTheContractAreRejectedByNode() {
    CsrGraph graph = rmat(6, 4, 3L, true);
    NodeFeatures features = features(graph.nodeCount(), new Random(3L));
    int target = highestDegree(graph);
    NeighbourRows reversed =
        new Rows(graph) {
          @Override
          public int copyRow(int node, int[] into, int offset) {
            int written = super.copyRow(node, into, offset);
            for (int i = 0; i < written / 2; i++) {
              int swap = into[offset + i];
              into[offset + i] = into[offset + written - 1 - i];
              into[offset + written - 1 - i] = swap;
            }
            return written;
          }
        };
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                NodeClassifier.of(gatGatv2Dense(3L), OPTIONS)
                    .classifyFromRows(reversed, new Features(features), target));
    assertTrue(e.getMessage().contains("row of node " + target), e.getMessage());
    assertTrue(e.getMessage().contains("strictly increasing"), e.getMessage());
    IllegalArgumentException range =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                NodeClassifier.of(gatGatv2Dense(3L), OPTIONS)
                    .classifyFromRows(graph, features, 1, graph.nodeCount()));
    assertTrue(range.getMessage().contains("at position 1"), range.getMessage());
  }

  @Test
  void sixteenThreadsGetTheSameResultsAsOne() throws Exception {
    Random random = new Random(77L);
    CsrGraph graph = rmat(9, 4, 77L, true);
    NodeFeatures features = features(graph.nodeCount(), random);
    NodeClassifier classifier = NodeClassifier.of(gatGatv2Dense(77L), OPTIONS);
    List<int[]> targetSets = new ArrayList<>();
    List<Classification> expected = new ArrayList<>();
    for (int s = 0; s < 12; s++) {
      int[] targets = randomTargets(random, graph.nodeCount(), 1 + random.nextInt(8));
      targetSets.add(targets);
      expected.add(classifier.classify(graph, features, targets));
    }
    ExecutorService pool = Executors.newFixedThreadPool(16);
    try {
      List<Callable<Integer>> tasks = new ArrayList<>();
      for (int task = 0; task < 192; task++) {
        int which = task % targetSets.size();
        boolean rows = task % 3 == 0;
        tasks.add(
            () -> {
              Classification c =
                  rows
                      ? classifier.classifyFromRows(
                          new Rows(graph), new Features(features), targetSets.get(which))
                      : classifier.classify(graph, features, targetSets.get(which));
              assertSame(expected.get(which), c, "seed 77, set " + which);
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

  private static void assertSame(Classification a, Classification b, String where) {
    assertEquals(a.fieldSize(), b.fieldSize(), where);
    NodeClassifierTest.assertSame(a, b, where);
  }

  /** A graph seen only through {@link NeighbourRows}, counting the rows copied. */
  private static class Rows implements NeighbourRows {
    private final CsrGraph graph;
    final AtomicInteger reads = new AtomicInteger();

    Rows(CsrGraph graph) {
      this.graph = graph;
    }

    @Override
    public int nodeCount() {
      return graph.nodeCount();
    }

    @Override
    public int degree(int target) {
      return graph.degree(target);
    }

    @Override
    public int copyRow(int target, int[] into, int offset) {
      reads.incrementAndGet();
      return graph.copyRow(target, into, offset);
    }
  }

  /** Features seen only through {@link FeatureRows}, counting the rows copied. */
  private static final class Features implements FeatureRows {
    private final NodeFeatures features;
    final AtomicInteger reads = new AtomicInteger();

    Features(NodeFeatures features) {
      this.features = features;
    }

    @Override
    public int nodeCount() {
      return features.nodeCount();
    }

    @Override
    public int featureCount() {
      return features.featureCount();
    }

    @Override
    public void copyRow(int node, float[] into, int offset) {
      reads.incrementAndGet();
      features.copyRow(node, into, offset);
    }
  }
}
