package dev.heed.examples;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.JGraphTGraphBuilder;
import dev.heed.graph.NodeIndex;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.TreeMap;
import org.jgrapht.Graph;
import org.jgrapht.graph.DefaultEdge;

/**
 * Classifies the vertices of a JGraphT graph, with features and results keyed by the caller's own
 * vertex ids.
 *
 * <p>Scenario (invented): a fraud analyst already keeps a graph of bank accounts in JGraphT, with
 * vertex ids like {@code "acct-000042"} and an edge for every sender → receiver pair seen, and a
 * feature store that returns six numbers per account id. She has a trained model that labels each
 * account {@code ordinary}, {@code merchant} or {@code mule-ring}. The data here comes from the
 * demo's seeded generator of invented payments ({@link PaymentsNetworkGenerator}), made smaller.
 *
 * <p>The steps:
 *
 * <ol>
 *   <li>Convert with {@link JGraphTGraphBuilder}. It numbers the vertices 0..n-1 in the graph's
 *       vertex order and returns a {@link NodeIndex} that maps both ways. Keep it.
 *   <li>Lay the features out in that node order, looking each vertex up by id (never assume that
 *       vertex order matches anything else; here it deliberately does not).
 *   <li>Classify every node once, with explanations.
 *   <li>Translate results back: node i is {@code index.idOf(i)}, and so are the neighbours in each
 *       explanation.
 * </ol>
 *
 * <p>Run from the repository root (the script compiles what it needs, then runs the example with
 * {@code --add-modules jdk.incubator.vector}):
 *
 * <pre>
 * examples/run ClassifyJGraphTGraph path/to/model.heed 20
 * </pre>
 *
 * Arguments: the model (a file, or {@code classpath:/dev/heed/demo/payments-demo.heed}, the bundled
 * demo model and the default) and how many accounts to print (default 20). The model must read the
 * six features of {@link PaymentsNetworkGenerator#FEATURE_NAMES}. See {@code examples/README.md}.
 *
 * <p>The outputs are model scores, not decisions, and attention weights show where the model
 * looked, not why.
 */
public final class ClassifyJGraphTGraph {

  /** Accounts in the example network. */
  public static final int ACCOUNTS = 2_000;

  /** Transfers in the example network (the demo's ten per account). */
  public static final int TRANSFERS = 20_000;

  /** Seed of the example network. */
  public static final long SEED = 7L;

  /** Neighbours listed per explained attention layer. */
  public static final int EXPLAIN_NEIGHBOURS = 3;

  private ClassifyJGraphTGraph() {}

  /**
   * One neighbour in an explanation, by the caller's id.
   *
   * @param id the neighbour's vertex id
   * @param weight its attention weight, averaged over heads
   * @param <V> the vertex type
   */
  public record Neighbour<V>(V id, float weight) {}

  /**
   * The result for one vertex, by the caller's ids.
   *
   * @param id the vertex id
   * @param label the predicted label
   * @param probability its probability
   * @param topNeighboursPerLayer for each attention layer (by layer name, in model order), the
   *     neighbours attended to most
   * @param <V> the vertex type
   */
  public record ScoredVertex<V>(
      V id,
      String label,
      float probability,
      Map<String, List<Neighbour<V>>> topNeighboursPerLayer) {}

  /**
   * Classifies every vertex of a JGraphT graph.
   *
   * @param graph input, not modified: directed or undirected; an edge u → v lets v attend to u
   *     (under the examples' policies, to each other)
   * @param featuresById input, not modified: one row per vertex, keyed by vertex id
   * @param classifier the classifier (its options decide explanations)
   * @param <V> the vertex type
   * @return one result per vertex, keyed by vertex id, in the graph's vertex order
   * @throws IllegalArgumentException if a vertex has no feature row
   */
  public static <V> Map<V, ScoredVertex<V>> classify(
      Graph<V, ?> graph, Map<V, float[]> featuresById, NodeClassifier classifier) {
    // 1. Convert, keeping the index between vertex ids and node numbers.
    IndexedGraph<V> indexed =
        JGraphTGraphBuilder.from(graph)
            .selfLoops(PaymentsGraphs.SELF_LOOPS)
            .direction(PaymentsGraphs.DIRECTION)
            .duplicates(PaymentsGraphs.DUPLICATES)
            .build();
    NodeIndex<V> index = indexed.nodes();

    // 2. Feature row i belongs to node i, that is, to vertex index.idOf(i).
    float[][] rows = new float[index.size()][];
    for (int i = 0; i < rows.length; i++) {
      V id = index.idOf(i);
      rows[i] = featuresById.get(id);
      if (rows[i] == null) {
        throw new IllegalArgumentException("vertex '" + id + "' has no feature row");
      }
    }
    NodeFeatures features = NodeFeatures.of(rows);

    // 3. One forward pass over the whole graph.
    Classification result = classifier.classify(indexed.graph(), features);

    // 4. Back to the caller's ids.
    Map<V, ScoredVertex<V>> byId = new LinkedHashMap<>();
    for (NodePrediction p : result.predictions()) {
      Map<String, List<Neighbour<V>>> layers = new LinkedHashMap<>();
      for (LayerExplanation layer : p.explanation().orElse(List.of())) {
        List<Neighbour<V>> top = new ArrayList<>();
        for (NeighbourWeight w : layer.topNeighbours()) {
          top.add(new Neighbour<>(index.idOf(w.node()), w.weight()));
        }
        layers.put(layer.layerName(), List.copyOf(top));
      }
      V id = index.idOf(p.node());
      byId.put(id, new ScoredVertex<>(id, p.label(), p.probability(), layers));
    }
    return byId;
  }

  /**
   * Runs the example.
   *
   * @param args optional: the model location (default {@link ModelSource#DEMO_MODEL}) and the
   *     number of accounts to print (default 20)
   * @throws IOException if the model cannot be read
   */
  public static void main(String[] args) throws IOException {
    String location = args.length > 0 ? args[0] : ModelSource.DEMO_MODEL;
    int show = args.length > 1 ? Integer.parseInt(args[1]) : 20;
    AttentionModel model = ModelSource.load(location);
    int expected = PaymentsNetworkGenerator.FEATURE_NAMES.size();
    if (model.inputFeatureCount() != expected) {
      throw new IllegalArgumentException(
          "this example feeds "
              + expected
              + " features "
              + PaymentsNetworkGenerator.FEATURE_NAMES
              + " but the model reads "
              + model.inputFeatureCount());
    }

    // The caller's own data: a JGraphT graph over account ids, and features by account id.
    PaymentsNetwork network = PaymentsNetworkGenerator.of(ACCOUNTS, TRANSFERS, SEED).generate();
    Graph<String, DefaultEdge> accounts = PaymentsGraphs.toJGraphT(network);
    Map<String, float[]> featuresById = PaymentsGraphs.featuresById(network);

    NodeClassifier classifier =
        NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(EXPLAIN_NEIGHBOURS));
    Map<String, ScoredVertex<String>> scored = classify(accounts, featuresById, classifier);

    System.out.printf(
        "%,d accounts, %,d sender-receiver pairs, model %s%n",
        accounts.vertexSet().size(), accounts.edgeSet().size(), location);
    Map<String, Integer> counts = new TreeMap<>();
    scored.values().forEach(s -> counts.merge(s.label(), 1, Integer::sum));
    System.out.println("predicted labels: " + counts);
    System.out.println();
    // Print in account-id order (not vertex order) to show the results are keyed by id.
    new TreeMap<>(scored).values().stream().limit(show).forEach(ClassifyJGraphTGraph::print);
  }

  private static void print(ScoredVertex<String> s) {
    System.out.printf("%s  %-10s %.3f%n", s.id(), s.label(), s.probability());
    s.topNeighboursPerLayer()
        .forEach(
            (layer, top) -> {
              StringBuilder line = new StringBuilder("    attended most (" + layer + "):");
              for (Neighbour<String> n : top) {
                line.append(String.format(" %s %.2f", n.id(), n.weight()));
              }
              System.out.println(line);
            });
  }
}
