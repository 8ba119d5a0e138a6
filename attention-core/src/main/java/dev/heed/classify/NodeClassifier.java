package dev.heed.classify;

import dev.heed.graph.AttentionPattern;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerAttention;
import dev.heed.model.ModelOutput;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Objects;
import java.util.PriorityQueue;

/**
 * Classifies the nodes of a graph with an {@link AttentionModel}, optionally explaining each
 * prediction by the neighbours each attention layer attended to most.
 *
 * <pre>{@code
 * AttentionModel model = ModelFile.read(Path.of("model.heed"));
 * NodeClassifier classifier =
 *     NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(5));
 * Classification result = classifier.classify(graph, NodeFeatures.readNpy(Path.of("x.npy")));
 * NodePrediction p = result.forNode(42);
 * String label = p.label();
 * List<NeighbourWeight> why = p.explanation().orElseThrow().get(0).topNeighbours();
 * }</pre>
 *
 * <p>Cost: one model forward pass over the whole graph per call (also when only some nodes are
 * requested), plus O(k·deg·heads) per explained node and attention layer.
 *
 * <p>Thread safety: immutable; one classifier (and its model) may serve many threads at once, each
 * call using only its own scratch.
 */
public final class NodeClassifier {

  private final AttentionModel model;
  private final ClassifyOptions options;

  private NodeClassifier(AttentionModel model, ClassifyOptions options) {
    this.model = model;
    this.options = options;
  }

  /**
   * Returns a classifier with {@link ClassifyOptions#defaults()}.
   *
   * @param model the model
   * @return the classifier
   */
  public static NodeClassifier of(AttentionModel model) {
    return of(model, ClassifyOptions.defaults());
  }

  /**
   * Returns a classifier.
   *
   * @param model the model
   * @param options path, top labels, explanations
   * @return the classifier
   */
  public static NodeClassifier of(AttentionModel model, ClassifyOptions options) {
    return new NodeClassifier(
        Objects.requireNonNull(model, "model"), Objects.requireNonNull(options, "options"));
  }

  /**
   * Returns the model.
   *
   * @return the model
   */
  public AttentionModel model() {
    return model;
  }

  /**
   * Returns the options.
   *
   * @return the options
   */
  public ClassifyOptions options() {
    return options;
  }

  /**
   * Classifies every node.
   *
   * @param graph the graph (target i attends to the sources in row i); n nodes
   * @param features n × the model's input feature count, not modified
   * @return one prediction per node, in node order
   * @throws IllegalArgumentException if the feature matrix does not have n rows and the model's
   *     feature count as columns
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classify(AttentionPattern graph, NodeFeatures features) {
    Objects.requireNonNull(graph, "graph");
    int[] all = new int[graph.nodeCount()];
    for (int i = 0; i < all.length; i++) {
      all[i] = i;
    }
    return run(graph, features, all);
  }

  /**
   * Classifies chosen nodes. The model still runs over the whole graph.
   *
   * @param graph the graph; n nodes
   * @param features n × the model's input feature count, not modified
   * @param nodes input, not modified: node ids in {@code 0..n-1}, in the order wanted (repeats
   *     allowed)
   * @return one prediction per requested node, in request order
   * @throws IllegalArgumentException if a node id is out of range (the message gives its position)
   *     or the features do not fit
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classify(AttentionPattern graph, NodeFeatures features, int... nodes) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(nodes, "nodes");
    int n = graph.nodeCount();
    for (int p = 0; p < nodes.length; p++) {
      if (nodes[p] < 0 || nodes[p] >= n) {
        throw new IllegalArgumentException(
            "node id "
                + nodes[p]
                + " at position "
                + p
                + " is out of range; the graph has nodes 0.."
                + (n - 1));
      }
    }
    return run(graph, features, nodes.clone());
  }

  private Classification run(AttentionPattern graph, NodeFeatures features, int[] nodes) {
    Objects.requireNonNull(features, "features");
    if (features.featureCount() != model.inputFeatureCount()) {
      throw new IllegalArgumentException(
          "features have "
              + features.featureCount()
              + " columns but the model reads "
              + model.inputFeatureCount()
              + " features per node"
              + (model.featureNames().isEmpty() ? "" : " " + model.featureNames()));
    }
    if (features.nodeCount() != graph.nodeCount()) {
      throw new IllegalArgumentException(
          "features have "
              + features.nodeCount()
              + " rows but the graph has "
              + graph.nodeCount()
              + " nodes; pass one row per node, in node id order");
    }
    ModelOutput out = model.forward(graph, features.shared(), options.path(), options.explain());
    List<String> labels = model.classLabels();
    int k = Math.min(options.topLabels(), labels.size());
    List<NodePrediction> predictions = new ArrayList<>(nodes.length);
    for (int node : nodes) {
      float[] p = out.row(node);
      List<LabelScore> top = topLabels(p, labels, k);
      List<LayerExplanation> explanation = options.explain() ? explain(out, node) : null;
      predictions.add(new NodePrediction(node, p, top, explanation));
    }
    return new Classification(labels, predictions, out.layerRuns());
  }

  private static List<LabelScore> topLabels(float[] p, List<String> labels, int k) {
    List<LabelScore> all = new ArrayList<>(p.length);
    for (int c = 0; c < p.length; c++) {
      all.add(new LabelScore(labels.get(c), c, p[c]));
    }
    all.sort(
        Comparator.comparingDouble((LabelScore s) -> -s.probability())
            .thenComparingInt(LabelScore::index));
    return all.subList(0, k);
  }

  private List<LayerExplanation> explain(ModelOutput out, int node) {
    int k = options.explainNeighbours();
    List<LayerExplanation> layers = new ArrayList<>();
    for (LayerAttention a : out.attention()) {
      int count = a.sourceCount(node);
      List<NeighbourWeight> mean = new ArrayList<>(count);
      for (int t = 0; t < count; t++) {
        mean.add(new NeighbourWeight(a.source(node, t), a.meanWeight(node, t)));
      }
      List<List<NeighbourWeight>> perHead = new ArrayList<>(a.heads());
      for (int h = 0; h < a.heads(); h++) {
        List<NeighbourWeight> head = new ArrayList<>(count);
        for (int t = 0; t < count; t++) {
          head.add(new NeighbourWeight(a.source(node, t), a.weight(node, t, h)));
        }
        perHead.add(top(head, k));
      }
      layers.add(new LayerExplanation(a.layerIndex(), a.layerName(), top(mean, k), perHead));
    }
    return layers;
  }

  private static final Comparator<NeighbourWeight> BEST_FIRST =
      Comparator.comparingDouble((NeighbourWeight w) -> -w.weight())
          .thenComparingInt(NeighbourWeight::node);

  /** The k best of {@code all} in order, with a bounded heap: O(m log k) for m candidates. */
  private static List<NeighbourWeight> top(List<NeighbourWeight> all, int k) {
    PriorityQueue<NeighbourWeight> heap = new PriorityQueue<>(k + 1, BEST_FIRST.reversed());
    for (NeighbourWeight w : all) {
      heap.add(w);
      if (heap.size() > k) {
        heap.poll();
      }
    }
    List<NeighbourWeight> best = new ArrayList<>(heap);
    best.sort(BEST_FIRST);
    return List.copyOf(best);
  }
}
