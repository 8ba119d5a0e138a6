package dev.heed.classify;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerAttention;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.model.TestModels;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyFormatException;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.concurrent.Callable;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The classification API over the NumPy-exported fixture model (make_model_fixture.py), run on the
 * float64 reference kernel. Probabilities and attention themselves are checked against NumPy in
 * dev.heed.model.NumpyExportedModelTest; here: the API's bookkeeping, validation and concurrency.
 */
class NodeClassifierTest {

  private static final ClassifyOptions SPARSE =
      ClassifyOptions.defaults().withPath(PathChoice.SPARSE);

  private static NodeFeatures fixtureFeatures() throws IOException {
    NpyArray f = TestModels.npyResource("features.npy");
    return NodeFeatures.ofRowMajor(f.toFloats(), f.dimension(0), f.dimension(1));
  }

  @Test
  void classifiesEveryNodeWithProbabilitiesLabelsAndTopK() throws IOException {
    AttentionModel model = TestModels.mixedFixture();
    CsrGraph graph = TestModels.fixtureGraph();
    NodeFeatures features = fixtureFeatures();
    Classification result =
        NodeClassifier.of(model, SPARSE.withTopLabels(2)).classify(graph, features);
    ModelOutput direct = model.forward(graph, features.shared(), PathChoice.SPARSE, false);
    assertEquals(graph.nodeCount(), result.predictions().size());
    assertEquals(model.layers().size(), result.layerRuns().size());
    assertEquals(
        direct.layerRuns().stream().map(r -> r.layerName() + r.path()).toList(),
        result.layerRuns().stream().map(r -> r.layerName() + r.path()).toList());
    for (NodePrediction p : result.predictions()) {
      float[] probs = p.probabilities();
      assertArrayEquals(direct.row(p.node()), probs, 0f);
      int best = 0;
      for (int c = 1; c < probs.length; c++) {
        if (probs[c] > probs[best]) {
          best = c;
        }
      }
      assertEquals(best, p.labelIndex());
      assertEquals(model.classLabels().get(best), p.label());
      assertEquals(2, p.topLabels().size());
      assertTrue(p.topLabels().get(0).probability() >= p.topLabels().get(1).probability());
      assertTrue(p.explanation().isEmpty());
    }
  }

  @Test
  void chosenNodesComeBackInRequestOrder() throws IOException {
    NodeClassifier classifier = NodeClassifier.of(TestModels.mixedFixture(), SPARSE);
    CsrGraph graph = TestModels.fixtureGraph();
    Classification all = classifier.classify(graph, fixtureFeatures());
    Classification some = classifier.classify(graph, fixtureFeatures(), 7, 2, 7);
    assertEquals(List.of(7, 2, 7), some.predictions().stream().map(NodePrediction::node).toList());
    assertArrayEquals(all.forNode(2).probabilities(), some.forNode(2).probabilities(), 0f);
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> classifier.classify(graph, fixtureFeatures(), 3, 12));
    assertTrue(e.getMessage().contains("node id 12 at position 1"), e.getMessage());
  }

  @Test
  void explanationsListTheMostAttendedNeighbours() throws IOException {
    AttentionModel model = TestModels.mixedFixture();
    CsrGraph graph = TestModels.fixtureGraph();
    NodeFeatures features = fixtureFeatures();
    Classification result =
        NodeClassifier.of(model, SPARSE.withExplanations(2)).classify(graph, features);
    ModelOutput direct = model.forward(graph, features.shared(), PathChoice.SPARSE, true);
    for (NodePrediction p : result.predictions()) {
      List<LayerExplanation> layers = p.explanation().orElseThrow();
      assertEquals(5, layers.size(), "one explanation per attention layer");
      for (int l = 0; l < layers.size(); l++) {
        LayerExplanation ex = layers.get(l);
        LayerAttention a = direct.attention().get(l);
        assertEquals(a.layerName(), ex.layerName());
        // Brute force: the largest mean weight over the node's sources.
        float best = -1;
        for (int t = 0; t < a.sourceCount(p.node()); t++) {
          best = Math.max(best, a.meanWeight(p.node(), t));
        }
        assertEquals(best, ex.topNeighbours().get(0).weight(), 0f);
        assertTrue(ex.topNeighbours().size() <= 2);
        assertTrue(
            p.node() != 5 || l == 2 || ex.topNeighbours().size() == 1, "node 5 has only itself");
        for (int h = 0; h < ex.heads(); h++) {
          List<NeighbourWeight> head = ex.topNeighbours(h);
          for (int i = 1; i < head.size(); i++) {
            assertTrue(head.get(i - 1).weight() >= head.get(i).weight());
          }
        }
      }
    }
  }

  @Test
  void sixteenThreadsGetTheSameResultsAsOne() throws Exception {
    AttentionModel model = TestModels.mixedFixture();
    CsrGraph graph = TestModels.fixtureGraph();
    NodeClassifier classifier = NodeClassifier.of(model, SPARSE.withExplanations(3));
    long seed = 77L;
    Random random = new Random(seed);
    List<NodeFeatures> inputs = new ArrayList<>();
    List<Classification> expected = new ArrayList<>();
    for (int r = 0; r < 8; r++) {
      float[] values = new float[graph.nodeCount() * model.inputFeatureCount()];
      for (int i = 0; i < values.length; i++) {
        values[i] = (float) random.nextGaussian();
      }
      NodeFeatures f =
          NodeFeatures.ofRowMajor(values, graph.nodeCount(), model.inputFeatureCount());
      inputs.add(f);
      expected.add(classifier.classify(graph, f));
    }
    ExecutorService pool = Executors.newFixedThreadPool(16);
    try {
      List<Callable<int[]>> tasks = new ArrayList<>();
      for (int task = 0; task < 64; task++) {
        int which = task % inputs.size();
        tasks.add(
            () -> {
              Classification c = classifier.classify(graph, inputs.get(which));
              assertSame(expected.get(which), c, "seed " + seed + ", input " + which);
              return new int[] {which};
            });
      }
      for (Future<int[]> f : pool.invokeAll(tasks)) {
        f.get();
      }
    } finally {
      pool.shutdownNow();
    }
  }

  /** Asserts equal predictions, top labels and explanations (bit for bit). */
  static void assertSame(Classification a, Classification b, String where) {
    assertEquals(a.predictions().size(), b.predictions().size(), where);
    for (int i = 0; i < a.predictions().size(); i++) {
      NodePrediction p = a.predictions().get(i);
      NodePrediction q = b.predictions().get(i);
      assertArrayEquals(p.probabilities(), q.probabilities(), 0f, where);
      assertEquals(p.topLabels(), q.topLabels(), where);
      List<LayerExplanation> pe = p.explanation().orElseThrow();
      List<LayerExplanation> qe = q.explanation().orElseThrow();
      for (int l = 0; l < pe.size(); l++) {
        assertEquals(pe.get(l).topNeighbours(), qe.get(l).topNeighbours(), where);
      }
    }
  }

  @Test
  void featuresFromRowsAndNpyAgree(@TempDir Path dir) throws IOException {
    NodeFeatures reference = fixtureFeatures();
    int n = reference.nodeCount();
    int f = reference.featureCount();
    float[][] rows = new float[n][f];
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < f; j++) {
        rows[i][j] = reference.value(i, j);
      }
    }
    assertArrayEquals(reference.shared(), NodeFeatures.of(rows).shared(), 0f);
    Path npy = dir.resolve("x.npy");
    Files.write(npy, TestModels.resource("features.npy"));
    assertArrayEquals(reference.shared(), NodeFeatures.readNpy(npy).shared(), 0f);
    Npy.write(NpyArray.ofInts(new int[] {1, 2}, 1, 2), npy);
    assertThrows(NpyFormatException.class, () -> NodeFeatures.readNpy(npy));
  }

  @Test
  void rejectsFeaturesThatDoNotFit() throws IOException {
    NodeClassifier classifier = NodeClassifier.of(TestModels.mixedFixture(), SPARSE);
    CsrGraph graph = TestModels.fixtureGraph();
    IllegalArgumentException wrongWidth =
        assertThrows(
            IllegalArgumentException.class,
            () -> classifier.classify(graph, NodeFeatures.ofRowMajor(new float[12 * 4], 12, 4)));
    assertTrue(wrongWidth.getMessage().contains("model reads 5"), wrongWidth.getMessage());
    IllegalArgumentException wrongRows =
        assertThrows(
            IllegalArgumentException.class,
            () -> classifier.classify(graph, NodeFeatures.ofRowMajor(new float[11 * 5], 11, 5)));
    assertTrue(wrongRows.getMessage().contains("graph has 12 nodes"), wrongRows.getMessage());
    float[][] rows = new float[3][2];
    rows[2][1] = Float.NaN;
    IllegalArgumentException nan =
        assertThrows(IllegalArgumentException.class, () -> NodeFeatures.of(rows));
    assertTrue(nan.getMessage().contains("feature 1 of node 2 is NaN"), nan.getMessage());
    rows[2][1] = Float.POSITIVE_INFINITY;
    assertThrows(IllegalArgumentException.class, () -> NodeFeatures.of(rows));
  }

  @Test
  void anExplicitPathWithoutItsKernelFailsClearly() throws IOException {
    // attention-core's tests do not have dev.heed:attention-sparse on the class path.
    AttentionModel fromClassPath = TestModels.load(TestModels.resource("mixed.heed"));
    IllegalStateException e =
        assertThrows(
            IllegalStateException.class,
            () ->
                NodeClassifier.of(fromClassPath, SPARSE)
                    .classify(TestModels.fixtureGraph(), fixtureFeatures()));
    assertTrue(e.getMessage().contains("attention-sparse"), e.getMessage());
  }
}
