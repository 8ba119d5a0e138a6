package dev.heed.live;

import static dev.heed.live.LiveScoringChecks.assertMatches;
import static dev.heed.live.LiveScoringChecks.fullPass;
import static dev.heed.live.LiveScoringChecks.gaussian;
import static dev.heed.live.LiveScoringChecks.randomBatch;
import static dev.heed.live.LiveScoringChecks.relativeError;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTimeoutPreemptively;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.DirectionPolicy;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import dev.heed.model.TestModels;
import java.time.Duration;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.TreeSet;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * Incremental scoring on live graphs against from-scratch full passes, on the float64 reference
 * kernel. Graphs: R-MAT (RmatGenerator: Chakrabarti, Zhan, Faloutsos, "R-MAT: A Recursive Model for
 * Graph Mining", SDM 2004, Graph500 initiator) and Zachary's karate club (W. W. Zachary, "An
 * Information Flow Model for Conflict and Fission in Small Groups", Journal of Anthropological
 * Research 33(4), 1977; structure from JGraphT's NamedGraphGenerator), symmetrised and directed.
 * The fact under test: an attention layer's output at v reads v's row and the previous layer's
 * outputs at v and its in-neighbours, so refreshing the nodes reached from the changed rows and
 * features along out-edges, one hop per attention layer, reproduces the full pass. Models, features
 * and update sequences are fresh seeded values. Tolerance: 1e-5 norm-wise relative error per node.
 */
class IncrementalScorerTest {

  private static final int FEATURES = 5;
  private static final int CLASSES = 4;
  private static final RefreshOptions SPARSE =
      RefreshOptions.defaults().withPath(PathChoice.SPARSE);

  /** A graph, its name, and how many nodes it has. */
  private record Edges(String name, int n, int[] sources, int[] targets) {}

  private static Edges rmat(long seed) {
    int[][] e = LiveScoringChecks.rmatEdges(8, 4, seed);
    return new Edges("R-MAT scale 8", 1 << 8, e[0], e[1]);
  }

  private static Edges karate() {
    int[][] e = LiveScoringChecks.karateEdges();
    return new Edges("karate club (Zachary 1977)", 34, e[0], e[1]);
  }

  /** A model and how many attention layers it has. */
  private record Model(String name, AttentionModel model, int hops) {}

  private static Model twoLayers(long seed) {
    return new Model(
        "GAT, GATv2, dense",
        TestModels.withReferenceKernel(RandomModels.gatGatv2Dense(seed, FEATURES, CLASSES)),
        2);
  }

  private static Model threeLayers(long seed) {
    AttentionModel model =
        RandomModels.start(seed, FEATURES)
            .graphAttention("g1", "gat", 2, 3, true, "elu", true, "none")
            .graphAttention("g2", "gatv2", 2, 3, true, "relu", false, "identity")
            .graphAttention("g3", "gat", 2, 4, false, "identity", true, "linear")
            .dense("out", CLASSES, "identity")
            .softmax(CLASSES);
    return new Model("GAT, GATv2, GAT, dense", TestModels.withReferenceKernel(model), 3);
  }

  private static Model denseFirstMasked(long seed) {
    AttentionModel model =
        RandomModels.start(seed, FEATURES)
            .dense("pre", 6, "relu")
            .selfAttention("masked", false)
            .graphAttention("g", "gatv2", 2, 3, true, "elu", false, "none")
            .dense("out", CLASSES, "identity")
            .softmax(CLASSES);
    return new Model(
        "dense, graph-masked self-attention, GATv2, dense",
        TestModels.withReferenceKernel(model),
        2);
  }

  /**
   * Kept softmax sums: every GAT row keeps them (1), or only the long rows, as in production (none
   * of these small graphs' rows reach it, so every row runs over its local pattern).
   */
  private static final int[] SUMS_MIN_DEGREES = {1, IncrementalScorer.SUMS_MIN_DEGREE};

  static Stream<Arguments> cases() {
    List<Arguments> all = new ArrayList<>();
    long seed = 20261204L;
    for (boolean symmetric : new boolean[] {true, false}) {
      for (int g = 0; g < 2; g++) {
        for (int m = 0; m < 3; m++) {
          for (int sumsMinDegree : SUMS_MIN_DEGREES) {
            all.add(Arguments.of(g, m, symmetric, seed++, sumsMinDegree));
          }
        }
      }
    }
    return all.stream();
  }

  private static Model model(int which, long seed) {
    return switch (which) {
      case 0 -> twoLayers(seed);
      case 1 -> threeLayers(seed);
      default -> denseFirstMasked(seed);
    };
  }

  private static VersionedGraph<Integer> load(Edges edges, boolean symmetric, SplittableRandom r) {
    return LiveScoringChecks.load(
        edges.n(),
        edges.sources(),
        edges.targets(),
        gaussian(r, edges.n() * FEATURES),
        FEATURES,
        symmetric ? DirectionPolicy.SYMMETRISE : DirectionPolicy.KEEP);
  }

  @ParameterizedTest
  @MethodSource("cases")
  void refreshedScoresMatchAFullPassAfterEveryBatch(
      int graphKind, int modelKind, boolean symmetric, long seed, int sumsMinDegree) {
    SplittableRandom random = new SplittableRandom(seed);
    Edges edges = graphKind == 0 ? rmat(seed) : karate();
    Model model = model(modelKind, seed);
    String name =
        edges.name()
            + (symmetric ? " symmetrised" : " directed")
            + ", "
            + model.name()
            + ", sums from degree "
            + sumsMinDegree
            + ", seed ";
    try (VersionedGraph<Integer> graph = load(edges, symmetric, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE, sumsMinDegree)) {
      LiveSnapshot<Integer> start = graph.snapshot();
      float[][] before = fullPass(model.model(), start, PathChoice.SPARSE, model.hops());
      assertMatches(scorer, before, start.version(), name + seed + ", start");
      for (int b = 0; b < 25; b++) {
        BatchResult applied = randomBatch(graph, random, 1 + random.nextInt(6));
        RefreshReport report = scorer.refresh();
        String where = name + seed + ", batch " + b;
        assertTrue(report.isComplete(), where + ": " + report);
        assertEquals(applied.version(), report.version(), where);
        assertEquals(1, report.batches(), where);
        LiveSnapshot<Integer> now = graph.snapshot();
        float[][] after = fullPass(model.model(), now, PathChoice.SPARSE, model.hops());
        assertMatches(scorer, after, now.version(), where);
        assertRefreshedNodesCoverChanges(report, before, after, where);
        before = after;
      }
    }
  }

  /**
   * The report lists {@link RefreshReport#refreshedNodes()} nodes, increasing, the same as the
   * affected count (nothing was pending before), and every node whose full-pass score moved (or
   * that is new, or changed scorability) is among them.
   */
  private static void assertRefreshedNodesCoverChanges(
      RefreshReport report, float[][] before, float[][] after, String where) {
    int[] refreshed = report.refreshedNodeIndices();
    assertEquals(report.refreshedNodes(), refreshed.length, where);
    assertEquals(report.affectedNodes(), refreshed.length, where);
    for (int k = 1; k < refreshed.length; k++) {
      assertTrue(refreshed[k - 1] < refreshed[k], where + ": increasing at " + k);
    }
    for (int v = 0; v < after.length; v++) {
      boolean moved =
          v >= before.length
              || (before[v] == null) != (after[v] == null)
              || (after[v] != null
                  && relativeError(after[v], before[v]) > LiveScoringChecks.TOLERANCE);
      if (moved) {
        assertTrue(
            java.util.Arrays.binarySearch(refreshed, v) >= 0,
            where + ": node " + v + "'s score moved but it was not refreshed");
      }
    }
  }

  /**
   * A hub's kept softmax sums are updated in place when one source's input changes: against a
   * scorer of the same graph without kept sums, the refresh reads only the changed source for the
   * hub's row instead of its whole row (less work by about the hub's degree), and both scorers'
   * scores equal the full pass. Features scaled up to 8× in some rounds make the shift move and the
   * sums shrink, so rescaling and rebuilding run too.
   */
  @ParameterizedTest
  @ValueSource(booleans = {true, false})
  void keptSumsAreUpdatedInPlaceAndStayExact(boolean symmetric) {
    SplittableRandom random = new SplittableRandom(5150L);
    Model model = twoLayers(5150L);
    try (VersionedGraph<Integer> graph = load(rmat(5150L), symmetric, random);
        IncrementalScorer<Integer> kept =
            IncrementalScorer.create(model.model(), graph, SPARSE, 1);
        IncrementalScorer<Integer> plain =
            IncrementalScorer.create(model.model(), graph, SPARSE, Integer.MAX_VALUE)) {
      LiveSnapshot<Integer> start = graph.snapshot();
      int hub = hub(start);
      int degree = start.degree(hub);
      int[] row = new int[degree];
      start.copyRow(hub, row, 0);
      int source = row[0] == hub ? row[1] : row[0];
      int rounds = 12;
      int inPlace = 0;
      for (int round = 0; round < rounds; round++) {
        float[] x = gaussian(random, FEATURES);
        float scale = round % 3 == 2 ? 8f : 1f;
        for (int k = 0; k < x.length; k++) {
          x[k] *= scale;
        }
        graph.apply(graph.newBatch().setFeatures(source, x));
        RefreshReport withSums = kept.refresh();
        RefreshReport without = plain.refresh();
        LiveSnapshot<Integer> now = graph.snapshot();
        String where = "round " + round + ", hub degree " + degree + ": " + withSums;
        float[][] expected = fullPass(model.model(), now, PathChoice.SPARSE, 2);
        assertMatches(kept, expected, now.version(), where);
        assertMatches(plain, expected, now.version(), where + ", without kept sums");
        assertEquals(without.affectedNodes(), withSums.affectedNodes(), where);
        assertEquals(without.rowsComputed(), withSums.rowsComputed(), where);
        inPlace += withSums.entriesComputed() <= without.entriesComputed() - degree + 1 ? 1 : 0;
      }
      assertTrue(inPlace >= rounds / 2, inPlace + " of " + rounds + " rounds updated in place");
    }
  }

  @Test
  void severalBatchesBetweenRefreshesAreIngestedTogether() {
    SplittableRandom random = new SplittableRandom(77L);
    Model model = threeLayers(77L);
    try (VersionedGraph<Integer> graph = load(rmat(77L), false, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE)) {
      for (int round = 0; round < 6; round++) {
        int batches = 1 + random.nextInt(4);
        for (int b = 0; b < batches; b++) {
          randomBatch(graph, random, 1 + random.nextInt(5));
        }
        RefreshReport report = scorer.refresh();
        assertEquals(batches, report.batches());
        LiveSnapshot<Integer> now = graph.snapshot();
        assertMatches(
            scorer,
            fullPass(model.model(), now, PathChoice.SPARSE, 3),
            now.version(),
            "round " + round);
      }
    }
  }

  /** The node with the longest row. */
  private static int hub(LiveSnapshot<Integer> snapshot) {
    int hub = 0;
    for (int v = 1; v < snapshot.nodeCount(); v++) {
      if (snapshot.degree(v) > snapshot.degree(hub)) {
        hub = v;
      }
    }
    return hub;
  }

  @ParameterizedTest
  @MethodSource("budgetCases")
  void aHubUpdateWithASmallBudgetLeavesPendingNodesThatConverge(
      int graphKind, boolean symmetric, int sumsMinDegree) {
    SplittableRandom random = new SplittableRandom(31L + graphKind);
    Edges edges = graphKind == 0 ? rmat(31L) : karate();
    Model model = twoLayers(31L);
    RefreshOptions small = SPARSE.withWorkBudget(8);
    try (VersionedGraph<Integer> graph = load(edges, symmetric, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, small, sumsMinDegree)) {
      LiveSnapshot<Integer> before = graph.snapshot();
      int hub = hub(before);
      int other = (hub + 1) % before.nodeCount();
      while (before.hasEdge(other, hub)) {
        other = (other + 1) % before.nodeCount();
      }
      graph.apply(graph.newBatch().addEdge(other, hub).setFeatures(hub, gaussian(random, 5)));
      LiveSnapshot<Integer> after = graph.snapshot();
      float[][] expected = fullPass(model.model(), after, PathChoice.SPARSE, 2);
      RefreshReport first = scorer.refresh();
      String where = edges.name() + (symmetric ? " symmetrised" : " directed");
      assertEquals(after.version(), first.version(), where);
      assertTrue(first.pendingNodes() > 0, where + ": " + first);
      assertTrue(first.affectedNodes() > first.refreshedNodes(), where + ": " + first);
      assertEquals(first.pendingNodes(), scorer.pendingCount(), where);
      assertEquals(ScoreState.PENDING, scorer.score(hub).state(), where);
      int refreshes = 1;
      RefreshReport report = first;
      while (!report.isComplete()) {
        assertPendingOrExact(scorer, expected, after.version(), where);
        report = scorer.refresh();
        assertTrue(report.entriesComputed() > 0, where);
        assertTrue(++refreshes < 10_000, where);
      }
      assertTrue(refreshes >= 2, where + ": " + refreshes + " refreshes");
      assertMatches(scorer, expected, after.version(), where + ", converged");
    }
  }

  static Stream<Arguments> budgetCases() {
    List<Arguments> all = new ArrayList<>();
    for (int graphKind = 0; graphKind < 2; graphKind++) {
      for (boolean symmetric : new boolean[] {true, false}) {
        for (int sumsMinDegree : SUMS_MIN_DEGREES) {
          all.add(Arguments.of(graphKind, symmetric, sumsMinDegree));
        }
      }
    }
    return all.stream();
  }

  /** While work is pending, every node is pending or already exact for the new version. */
  private static void assertPendingOrExact(
      IncrementalScorer<Integer> scorer, float[][] expected, long version, String where) {
    int pending = 0;
    for (int v = 0; v < expected.length; v++) {
      LiveScore<Integer> s = scorer.score(v);
      assertEquals(version, s.version(), where);
      if (s.state() == ScoreState.PENDING) {
        pending++;
        assertEquals(0, s.probabilities().length, where);
        assertTrue(s.topLabel().isEmpty(), where);
      } else if (expected[v] != null) {
        assertEquals(ScoreState.FRESH, s.state(), where + ", node " + v);
        assertTrue(
            relativeError(expected[v], s.probabilities()) <= LiveScoringChecks.TOLERANCE,
            where + ", node " + v);
      }
    }
    assertEquals(scorer.pendingCount(), pending, where);
  }

  @Test
  void subscriptionsFireExactlyForChangedTopLabelsAndCrossedThresholds() {
    SplittableRandom random = new SplittableRandom(4242L);
    Model model = twoLayers(4242L);
    try (VersionedGraph<Integer> graph = load(rmat(4242L), true, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE)) {
      String label = model.model().classLabels().get(1);
      float threshold = 0.3f;
      Set<String> labelEvents = ConcurrentHashMap.newKeySet();
      Set<String> thresholdEvents = ConcurrentHashMap.newKeySet();
      Thread caller = Thread.currentThread();
      AtomicBoolean otherThread = new AtomicBoolean();
      scorer.onTopLabelChange(
          change -> {
            otherThread.compareAndSet(false, Thread.currentThread() != caller);
            labelEvents.add(
                change.version()
                    + ":"
                    + change.node()
                    + ":"
                    + change.previousLabel().orElse("-")
                    + ">"
                    + change.label());
          });
      scorer.onTopLabelChange(
          change -> {
            throw new IllegalStateException("a listener that fails");
          });
      scorer.onThreshold(
          label,
          threshold,
          crossing -> {
            assertEquals(label, crossing.classLabel());
            thresholdEvents.add(
                crossing.version() + ":" + crossing.node() + ":" + crossing.direction());
          });
      Set<String> expectedLabels = new TreeSet<>();
      Set<String> expectedThresholds = new TreeSet<>();
      float[][] before = fullPass(model.model(), graph.snapshot(), PathChoice.SPARSE, 2);
      List<String> labels = model.model().classLabels();
      for (int b = 0; b < 30; b++) {
        randomBatch(graph, random, 1 + random.nextInt(6));
        RefreshReport report = scorer.refresh();
        assertTrue(report.isComplete());
        LiveSnapshot<Integer> now = graph.snapshot();
        float[][] after = fullPass(model.model(), now, PathChoice.SPARSE, 2);
        for (int v = 0; v < after.length; v++) {
          if (after[v] == null) {
            continue;
          }
          boolean had = v < before.length && before[v] != null;
          int top = argMax(after[v]);
          int oldTop = had ? argMax(before[v]) : -1;
          if (top != oldTop) {
            expectedLabels.add(
                now.version()
                    + ":"
                    + v
                    + ":"
                    + (had ? labels.get(oldTop) : "-")
                    + ">"
                    + labels.get(top));
          }
          boolean above = after[v][1] >= threshold;
          boolean wasAbove = had && before[v][1] >= threshold;
          if (above != wasAbove) {
            expectedThresholds.add(now.version() + ":" + v + ":" + (above ? "UPWARD" : "DOWNWARD"));
          }
        }
        before = after;
      }
      assertFalse(otherThread.get(), "listeners run on the refreshing thread");
      assertTrue(expectedLabels.size() > 5, "the sequence should change some top labels");
      assertTrue(expectedThresholds.size() > 5, "the sequence should cross the threshold");
      assertEquals(expectedLabels, new TreeSet<>(labelEvents));
      assertEquals(expectedThresholds, new TreeSet<>(thresholdEvents));
    }
  }

  private static int argMax(float[] p) {
    int best = 0;
    for (int c = 1; c < p.length; c++) {
      if (p[c] > p[best]) {
        best = c;
      }
    }
    return best;
  }

  @Test
  void aClosedSubscriptionIsNotCalled() {
    SplittableRandom random = new SplittableRandom(5L);
    Model model = twoLayers(5L);
    try (VersionedGraph<Integer> graph = load(karate(), true, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE)) {
      List<TopLabelChange<Integer>> seen = new ArrayList<>();
      Subscription subscription = scorer.onTopLabelChange(seen::add);
      subscription.close();
      for (int b = 0; b < 10; b++) {
        graph.apply(graph.newBatch().setFeatures(b, gaussian(random, FEATURES)));
        scorer.refresh();
      }
      assertTrue(seen.isEmpty());
    }
  }

  @ParameterizedTest
  @ValueSource(ints = {1, IncrementalScorer.SUMS_MIN_DEGREE})
  void readersSeeVersionMatchedScoresWhileRefreshesRun(int sumsMinDegree) {
    assertTimeoutPreemptively(Duration.ofSeconds(120), () -> readersAndOneRefresher(sumsMinDegree));
  }

  private void readersAndOneRefresher(int sumsMinDegree) throws InterruptedException {
    SplittableRandom random = new SplittableRandom(8888L);
    Model model = twoLayers(8888L);
    try (VersionedGraph<Integer> graph = load(rmat(8888L), false, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(
                model.model(), graph, SPARSE.withWorkBudget(40), sumsMinDegree)) {
      Map<Long, float[][]> expected = new ConcurrentHashMap<>();
      LiveSnapshot<Integer> start = graph.snapshot();
      expected.put(start.version(), fullPass(model.model(), start, PathChoice.SPARSE, 2));
      AtomicBoolean done = new AtomicBoolean();
      int readers = 8;
      List<List<float[]>> samples = new ArrayList<>();
      List<List<long[]>> keys = new ArrayList<>();
      List<Throwable> failures = new ArrayList<>();
      CountDownLatch started = new CountDownLatch(readers);
      List<Thread> threads = new ArrayList<>();
      for (int t = 0; t < readers; t++) {
        List<float[]> mine = new ArrayList<>();
        List<long[]> myKeys = new ArrayList<>();
        samples.add(mine);
        keys.add(myKeys);
        SplittableRandom own = random.split();
        Thread reader =
            new Thread(
                () -> {
                  started.countDown();
                  long lastVersion = -1;
                  while (!done.get()) {
                    int n = graph.snapshot().nodeCount();
                    int node = own.nextInt(n);
                    LiveScore<Integer> s = scorer.score(node);
                    if (s.version() < lastVersion) {
                      throw new AssertionError(
                          "version went back from " + lastVersion + " to " + s.version());
                    }
                    lastVersion = s.version();
                    if (s.isFresh() && mine.size() < 20_000) {
                      mine.add(s.probabilities());
                      myKeys.add(new long[] {s.version(), node});
                    }
                  }
                },
                "reader-" + t);
        reader.setUncaughtExceptionHandler(
            (th, e) -> {
              synchronized (failures) {
                failures.add(e);
              }
            });
        threads.add(reader);
        reader.start();
      }
      started.await();
      for (int b = 0; b < 40; b++) {
        randomBatch(graph, random, 1 + random.nextInt(6));
        LiveSnapshot<Integer> now = graph.snapshot();
        expected.put(now.version(), fullPass(model.model(), now, PathChoice.SPARSE, 2));
        RefreshReport report;
        do {
          report = scorer.refresh();
        } while (!report.isComplete() && random.nextInt(4) != 0);
      }
      while (!scorer.refresh().isComplete()) {
        Thread.onSpinWait();
      }
      done.set(true);
      for (Thread reader : threads) {
        reader.join();
      }
      assertTrue(failures.isEmpty(), () -> failures.get(0).toString());
      int checked = 0;
      for (int t = 0; t < readers; t++) {
        for (int i = 0; i < samples.get(t).size(); i++) {
          long[] key = keys.get(t).get(i);
          float[] want = expected.get(key[0])[(int) key[1]];
          double error = relativeError(want, samples.get(t).get(i));
          assertTrue(
              error <= LiveScoringChecks.TOLERANCE,
              "reader " + t + ", version " + key[0] + ", node " + key[1] + ": " + error);
          checked++;
        }
      }
      assertTrue(checked > 1000, "readers checked " + checked + " fresh scores");
    }
  }

  @Test
  void badInputIsRefusedWithClearMessages() {
    SplittableRandom random = new SplittableRandom(9L);
    Model model = twoLayers(9L);
    VersionedGraph<Integer> graph = load(karate(), true, random);
    IncrementalScorer<Integer> scorer = IncrementalScorer.create(model.model(), graph, SPARSE);
    IllegalArgumentException unknown =
        assertThrows(IllegalArgumentException.class, () -> scorer.score(12345));
    assertTrue(unknown.getMessage().contains("unknown node id '12345'"), unknown.getMessage());
    assertThrows(NullPointerException.class, () -> scorer.score(null));
    IllegalArgumentException label =
        assertThrows(
            IllegalArgumentException.class, () -> scorer.onThreshold("no-such", 0.5f, c -> {}));
    assertTrue(label.getMessage().contains("unknown class label 'no-such'"), label.getMessage());
    String first = model.model().classLabels().get(0);
    IllegalArgumentException range =
        assertThrows(
            IllegalArgumentException.class, () -> scorer.onThreshold(first, 1.5f, c -> {}));
    assertTrue(range.getMessage().contains("[0, 1], got 1.5"), range.getMessage());
    assertThrows(IllegalArgumentException.class, () -> SPARSE.withWorkBudget(0));

    // a node added but not ingested yet is pending, not unknown
    graph.apply(graph.newBatch().addNode(500, gaussian(random, FEATURES)));
    LiveScore<Integer> notYet = scorer.score(500);
    assertEquals(ScoreState.PENDING, notYet.state());
    assertEquals(-1, notYet.nodeIndex());
    scorer.refresh();
    assertEquals(ScoreState.FRESH, scorer.score(500).state());

    scorer.close();
    scorer.close();
    IllegalStateException closed = assertThrows(IllegalStateException.class, scorer::refresh);
    assertTrue(closed.getMessage().contains("incremental scorer is closed"), closed.getMessage());
    assertThrows(IllegalStateException.class, () -> scorer.score(1));
    assertThrows(IllegalStateException.class, () -> scorer.onTopLabelChange(c -> {}));

    graph.close();
    IllegalStateException closedGraph =
        assertThrows(
            IllegalStateException.class,
            () -> IncrementalScorer.create(model.model(), graph, SPARSE));
    assertTrue(closedGraph.getMessage().contains("live graph is closed"), closedGraph.getMessage());

    try (VersionedGraph<Integer> wide = VersionedGraph.builder(FEATURES + 2).build()) {
      IllegalArgumentException width =
          assertThrows(
              IllegalArgumentException.class,
              () -> IncrementalScorer.create(model.model(), wide, SPARSE));
      assertTrue(
          width.getMessage().contains("reads 5 features per node but the live graph holds 7"),
          width.getMessage());
    }
  }

  @Test
  void aRefreshAfterTheGraphClosedStillIngestsItsLastBatches() {
    SplittableRandom random = new SplittableRandom(10L);
    Model model = twoLayers(10L);
    VersionedGraph<Integer> graph = load(karate(), false, random);
    try (IncrementalScorer<Integer> scorer =
        IncrementalScorer.create(model.model(), graph, SPARSE)) {
      randomBatch(graph, random, 4);
      graph.close();
      LiveSnapshot<Integer> last = graph.snapshot();
      assertEquals(last.version(), scorer.refresh().version());
      assertMatches(
          scorer, fullPass(model.model(), last, PathChoice.SPARSE, 2), last.version(), "");
    }
  }

  @Test
  void aModelWithFullSelfAttentionIsRefusedAtCreation() {
    AttentionModel full =
        RandomModels.start(3L, FEATURES)
            .graphAttention("g", "gat", 2, 3, true, "elu", false, "none")
            .selfAttention("everyone", true)
            .dense("out", CLASSES, "identity")
            .softmax(CLASSES);
    try (VersionedGraph<Integer> graph = load(karate(), true, new SplittableRandom(3L))) {
      IllegalArgumentException e =
          assertThrows(
              IllegalArgumentException.class,
              () -> IncrementalScorer.create(full, graph, RefreshOptions.defaults()));
      assertTrue(
          e.getMessage().contains("layer 'everyone' attends over every node"), e.getMessage());
      assertTrue(e.getMessage().contains("NodeClassifier"), e.getMessage());
    }
  }

  @Test
  void nodesWithoutFeaturesAreNotScorableUntilTheyGetThem() {
    SplittableRandom random = new SplittableRandom(12L);
    Model model = twoLayers(12L);
    try (VersionedGraph<Integer> graph = load(karate(), true, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE)) {
      graph.apply(graph.newBatch().addNode(34).addEdge(34, 0));
      scorer.refresh();
      assertEquals(ScoreState.NOT_SCORABLE, scorer.score(34).state());
      assertEquals(ScoreState.NOT_SCORABLE, scorer.score(0).state()); // 0 attends to 34
      int neighbourOfZero = -1;
      LiveSnapshot<Integer> now = graph.snapshot();
      for (int v = 1; v < 34; v++) {
        if (now.hasEdge(0, v)) {
          neighbourOfZero = v;
          break;
        }
      }
      assertEquals(ScoreState.NOT_SCORABLE, scorer.score(neighbourOfZero).state()); // 2 hops
      graph.apply(graph.newBatch().setFeatures(34, gaussian(random, FEATURES)));
      RefreshReport report = scorer.refresh();
      assertTrue(report.isComplete());
      LiveSnapshot<Integer> after = graph.snapshot();
      assertMatches(
          scorer, fullPass(model.model(), after, PathChoice.SPARSE, 2), after.version(), "");
    }
  }

  @Test
  void stateBytesCountEveryStageOutput() {
    SplittableRandom random = new SplittableRandom(13L);
    Model model = twoLayers(13L);
    try (VersionedGraph<Integer> graph = load(rmat(13L), true, random);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(model.model(), graph, SPARSE)) {
      int n = graph.snapshot().nodeCount();
      // stage 1: GAT (3 heads × 4, concatenated): 12 outputs; its kept projection 12 values and
      // 3 + 3 head terms. Stage 2: GATv2 (2 heads × 5), dense, softmax: 4 outputs; projection
      // 2 × 10 values.
      long outputs = 4L * n * (12 + 18 + CLASSES + 20);
      long bytes = scorer.stateBytes();
      assertTrue(bytes >= outputs, bytes + " < " + outputs);
      assertTrue(bytes <= outputs + 5L * n + 256, bytes + " for " + n + " nodes");
    }
  }
}
