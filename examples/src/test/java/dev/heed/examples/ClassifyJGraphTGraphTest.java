package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.examples.ClassifyJGraphTGraph.Neighbour;
import dev.heed.examples.ClassifyJGraphTGraph.ScoredVertex;
import dev.heed.graph.IndexedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import java.io.ByteArrayOutputStream;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Map;
import org.jgrapht.Graph;
import org.jgrapht.graph.DefaultDirectedGraph;
import org.jgrapht.graph.DefaultEdge;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The JGraphT example must give every vertex, by its own id, the answer the model gives that
 * account, whatever order the JGraphT graph lists its vertices in. The reference is the same model
 * run on a graph built directly from the network's arrays (node i = account i).
 */
class ClassifyJGraphTGraphTest {

  private static final long SEED = 20261202L;
  private static final int EXPLAIN = 3;

  /** Probabilities of the two paths may differ by float32 summation order only. */
  private static final float TOLERANCE = 1e-5f;

  private static PaymentsNetwork network() {
    return PaymentsNetworkGenerator.of(1000, 8000, SEED).generate();
  }

  @Test
  void answersByVertexIdMatchTheModelWhateverTheVertexOrder() {
    PaymentsNetwork network = network();
    AttentionModel model = TestModel.build(SEED);
    NodeClassifier classifier =
        NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(EXPLAIN));
    IndexedGraph<String> direct = PaymentsGraphs.toIndexedGraph(network);
    Classification reference =
        classifier.classify(direct.graph(), PaymentsGraphs.features(network));

    Graph<String, DefaultEdge> asGiven = PaymentsGraphs.toJGraphT(network);
    for (Graph<String, DefaultEdge> graph : List.of(asGiven, reversedVertexOrder(asGiven))) {
      Map<String, ScoredVertex<String>> scored =
          ClassifyJGraphTGraph.classify(graph, PaymentsGraphs.featuresById(network), classifier);
      assertEquals(network.accountCount(), scored.size());
      for (int a = 0; a < network.accountCount(); a++) {
        String id = network.accountId(a);
        NodePrediction expected = reference.forNode(a);
        ScoredVertex<String> actual = scored.get(id);
        String where = "account " + id + " (seed " + SEED + ")";
        assertEquals(expected.probability(), actual.probability(), TOLERANCE, where);
        float[] p = expected.probabilities();
        float secondBest = 0;
        for (int c = 0; c < p.length; c++) {
          secondBest = c == expected.labelIndex() ? secondBest : Math.max(secondBest, p[c]);
        }
        if (expected.probability() - secondBest > 1e-4f) {
          assertEquals(expected.label(), actual.label(), where);
        }
        List<LayerExplanation> layers = expected.explanation().orElseThrow();
        assertEquals(layers.size(), actual.topNeighboursPerLayer().size(), where);
        for (LayerExplanation layer : layers) {
          assertSameNeighbours(
              layer.topNeighbours(),
              actual.topNeighboursPerLayer().get(layer.layerName()),
              direct,
              where + ", layer " + layer.layerName());
        }
      }
    }
  }

  /** Same weights in order; same ids wherever the weights are not (near) ties. */
  private static void assertSameNeighbours(
      List<NeighbourWeight> expected,
      List<Neighbour<String>> actual,
      IndexedGraph<String> direct,
      String where) {
    assertEquals(expected.size(), actual.size(), where);
    for (int t = 0; t < expected.size(); t++) {
      float w = expected.get(t).weight();
      assertEquals(w, actual.get(t).weight(), TOLERANCE, where);
      boolean tiedBefore = t > 0 && expected.get(t - 1).weight() - w < 1e-4f;
      boolean tiedAfter = t + 1 < expected.size() && w - expected.get(t + 1).weight() < 1e-4f;
      if (!tiedBefore && !tiedAfter) {
        assertEquals(
            direct.nodes().idOf(expected.get(t).node()), actual.get(t).id(), where + ", rank " + t);
      }
    }
  }

  @Test
  void explanationNeighboursAreTheVertexOrItsJGraphTNeighbours() {
    PaymentsNetwork network = network();
    Graph<String, DefaultEdge> graph = reversedVertexOrder(PaymentsGraphs.toJGraphT(network));
    NodeClassifier classifier =
        NodeClassifier.of(
            TestModel.build(SEED + 1), ClassifyOptions.defaults().withExplanations(EXPLAIN));
    Map<String, ScoredVertex<String>> scored =
        ClassifyJGraphTGraph.classify(graph, PaymentsGraphs.featuresById(network), classifier);
    int explained = 0;
    for (ScoredVertex<String> s : scored.values()) {
      for (List<Neighbour<String>> top : s.topNeighboursPerLayer().values()) {
        assertFalse(top.isEmpty(), s.id() + " has at least its self-loop");
        for (Neighbour<String> n : top) {
          boolean adjacent =
              n.id().equals(s.id())
                  || graph.containsEdge(n.id(), s.id())
                  || graph.containsEdge(s.id(), n.id());
          assertTrue(adjacent, n.id() + " explains " + s.id() + " but is not its neighbour");
          explained++;
        }
      }
    }
    assertTrue(explained > network.accountCount(), "explanations were listed");
  }

  @Test
  void aVertexWithoutFeaturesIsNamed() {
    PaymentsNetwork network = network();
    Map<String, float[]> features = new java.util.HashMap<>(PaymentsGraphs.featuresById(network));
    features.remove("acct-000017");
    NodeClassifier classifier = NodeClassifier.of(TestModel.build(SEED));
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                ClassifyJGraphTGraph.classify(
                    PaymentsGraphs.toJGraphT(network), features, classifier));
    assertTrue(e.getMessage().contains("acct-000017"), e.getMessage());
  }

  @Test
  void mainPrintsLabelsAndExplanationsById(@TempDir Path dir) throws Exception {
    Path model = dir.resolve("test-model.heed");
    ModelFile.write(TestModel.build(SEED), model);
    ByteArrayOutputStream captured = new ByteArrayOutputStream();
    PrintStream original = System.out;
    System.setOut(new PrintStream(captured, true, StandardCharsets.UTF_8));
    try {
      ClassifyJGraphTGraph.main(new String[] {model.toString(), "5"});
    } finally {
      System.setOut(original);
    }
    String out = captured.toString(StandardCharsets.UTF_8);
    assertTrue(out.contains("2,000 accounts"), out);
    assertTrue(out.contains("predicted labels: {test-"), out);
    assertTrue(out.contains("acct-000000  test-"), out);
    assertTrue(out.contains("acct-000004  test-"), out);
    assertFalse(out.contains("acct-000005  test-"), out);
    assertTrue(out.contains("attended most (gat1): acct-"), out);
    assertTrue(out.contains("attended most (gat2): acct-"), out);
  }

  @Test
  void mainRejectsAModelWithOtherFeatures(@TempDir Path dir) throws Exception {
    Path model = dir.resolve("other.heed");
    ModelFile.write(TestModel.build(SEED, 7), model); // the example feeds 6 features
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> ClassifyJGraphTGraph.main(new String[] {model.toString()}));
    assertTrue(e.getMessage().contains("reads 7"), e.getMessage());
  }

  private static Graph<String, DefaultEdge> reversedVertexOrder(Graph<String, DefaultEdge> g) {
    Graph<String, DefaultEdge> copy = new DefaultDirectedGraph<>(DefaultEdge.class);
    List<String> vertices = new ArrayList<>(g.vertexSet());
    Collections.reverse(vertices);
    vertices.forEach(copy::addVertex);
    for (DefaultEdge e : g.edgeSet()) {
      copy.addEdge(g.getEdgeSource(e), g.getEdgeTarget(e));
    }
    return copy;
  }
}
