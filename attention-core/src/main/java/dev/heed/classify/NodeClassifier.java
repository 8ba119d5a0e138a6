package dev.heed.classify;

import dev.heed.attention.KernelOptions;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.NeighbourRows;
import dev.heed.graph.NodeLayout;
import dev.heed.model.AttentionModel;
import dev.heed.model.FieldOutput;
import dev.heed.model.KeptHubRows;
import dev.heed.model.LayerAttention;
import dev.heed.model.ReceptiveField;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.Objects;
import java.util.PriorityQueue;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Classifies the nodes of a graph with an {@link AttentionModel}, optionally explaining each
 * prediction by the neighbours each attention layer attended to most.
 *
 * <pre>{@code
 * AttentionModel model = ModelFile.read(Path.of("model.heed"));
 * NodeClassifier classifier =
 *     NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(5));
 * Classification result = classifier.classify(graph, features, 42, 7);
 * NodePrediction p = result.forNode(42);
 * String label = p.label();
 * List<NeighbourWeight> why = p.explanation().orElseThrow().get(0).topNeighbours();
 * FieldSize touched = result.fieldSize(); // nodes read and attention entries computed
 * }</pre>
 *
 * <p><b>Chosen nodes are scored over their receptive field only.</b> An L-layer attention model's
 * output at node v depends only on v's L-hop in-neighbourhood, so {@link
 * #classify(AttentionPattern, NodeFeatures, int...)} on a {@link CsrGraph} and {@link
 * #classifyFromRows} plan that field ({@link AttentionModel#receptiveField}), read the features of
 * its nodes only, and run each layer over the rows later layers need; many targets in one call
 * share the union of their fields. The results equal a whole-graph pass's up to float rounding
 * (each row's sources reach the kernel in another order), explanations included. A model with a
 * layer that attends over every node (full self-attention) needs the whole graph for any target;
 * the call then runs over the whole graph, says so in {@link Classification#wholeGraph()} and logs
 * it at debug level. {@link ClassifyOptions#fieldCap()} bounds what one call may compute over.
 *
 * <p>Cost: classifying chosen nodes costs O(Σ deg) over the rows read to plan the field, plus the
 * layers' work over the field's nodes and entries, never O(n) (except for a whole-graph call: one
 * model pass over the graph). Classifying every node costs one model pass. Explanations add
 * O(k·deg·heads) per explained node and attention layer.
 *
 * <p>Thread safety: immutable; one classifier (and its model) may serve many threads at once.
 * Planning a field borrows reusable scratch (the global-to-local id map and row buffers) from a
 * shared pool and gives it back before the layers run, so no two calls share scratch (see {@code
 * FieldScratch} for why a pool rather than per-thread copies); the arrays a call computes with are
 * sized to its field and its own.
 */
public final class NodeClassifier {

  /**
   * Default T of {@link #forStaticGraph(CsrGraph, NodeFeatures)}: rows with at least 64 entries are
   * kept. Chosen by measurement on an R-MAT graph of 1M nodes and 32.45M entries with a 2-layer GAT
   * (benchmarks/RESULTS.md, "Scoring one node over its receptive field"): against 128 it nearly
   * halved the 99th percentile field (423 against 748 attention entries) for 11 % more kept bytes
   * (19.7 against 17.7 MiB), with a 99th percentile of 0.3 to 1.2 ms of CPU per query; 256 kept
   * half the bytes with a 99th percentile of 3.5 ms; 32 kept twice the bytes for no gain in the
   * tail.
   */
  public static final int DEFAULT_HUB_DEGREE = 64;

  private static final Logger LOG = LoggerFactory.getLogger(NodeClassifier.class);

  private final AttentionModel model;
  private final ClassifyOptions options;

  /** The model the calls run: {@link #model} with the options' node-row precision. */
  private final AttentionModel running;

  private NodeClassifier(AttentionModel model, ClassifyOptions options) {
    this.model = model;
    this.options = options;
    KernelOptions kernelOptions = model.kernelOptions();
    this.running =
        kernelOptions.nodeRowPrecision() == options.nodeRowPrecision()
            ? model
            : model.withKernelOptions(
                kernelOptions.withNodeRowPrecision(options.nodeRowPrecision()));
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
   * @param options path, top labels, explanations, field cap
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
   * Classifies every node: one model pass over the whole graph. On a {@link CsrGraph} with a {@link
   * NodeLayout} ({@link CsrGraph#withLocalityOrder}) and without explanations, the pass runs over
   * the layout's renumbered rows with every per-node array in layout order (the features are
   * gathered into that order once per call), and each prediction comes back at its node's id; the
   * probabilities agree with the graph's own order to float rounding.
   *
   * @param graph the graph (target i attends to the sources in row i); n nodes
   * @param features n × the model's input feature count, not modified
   * @return one prediction per node, in node order
   * @throws IllegalArgumentException if the feature matrix does not have n rows and the model's
   *     feature count as columns
   * @throws dev.heed.model.ReceptiveFieldTooLargeException if the whole graph passes the field cap
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classify(AttentionPattern graph, NodeFeatures features) {
    Objects.requireNonNull(graph, "graph");
    checkFeatures(features, graph.nodeCount());
    NodeLayout layout =
        graph instanceof CsrGraph csr && !options.explain() ? csr.nodeLayout().orElse(null) : null;
    if (layout != null) {
      // the whole pass in layout order; explanations name sources, so they keep the graph's order
      ReceptiveField field = running.wholeGraphField(layout.rows(), null, options.fieldCap());
      return run(field, new LaidOutFeatures(features, layout), null, layout);
    }
    return run(running.wholeGraphField(graph, null, options.fieldCap()), features, null, null);
  }

  /** Feature rows in a node layout's order: row p is node {@code layout.node(p)}'s. */
  private record LaidOutFeatures(FeatureRows features, NodeLayout layout) implements FeatureRows {
    @Override
    public int nodeCount() {
      return features.nodeCount();
    }

    @Override
    public int featureCount() {
      return features.featureCount();
    }

    @Override
    public void copyRow(int position, float[] into, int offset) {
      features.copyRow(layout.node(position), into, offset);
    }
  }

  /**
   * Classifies chosen nodes. On a {@link CsrGraph} only their receptive field is computed (see the
   * class comment); on the {@link dev.heed.graph.CompletePattern}, or with a model that attends
   * over every node, the whole graph is ({@link Classification#wholeGraph()}).
   *
   * @param graph the graph; n nodes
   * @param features n × the model's input feature count, not modified
   * @param nodes input, not modified: node ids in {@code 0..n-1}, in the order wanted (repeats
   *     allowed)
   * @return one prediction per requested node, in request order, with the field's size
   * @throws IllegalArgumentException if a node id is out of range (the message gives its position)
   *     or the features do not fit
   * @throws dev.heed.model.ReceptiveFieldTooLargeException if the field passes the field cap
   *     (before any layer runs; the message names the target, the size and the cap)
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classify(AttentionPattern graph, NodeFeatures features, int... nodes) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(nodes, "nodes");
    checkFeatures(features, graph.nodeCount());
    int[] requested = nodes.clone();
    ReceptiveField field =
        graph instanceof CsrGraph csr
            ? running.receptiveField(csr, requested, options.fieldCap())
            : running.wholeGraphField(graph, requested, options.fieldCap());
    return run(field, features, requested, null);
  }

  /**
   * Classifies chosen nodes of a graph and features read one row at a time, such as one version of
   * a graph store that changes over time: only the targets' receptive field is read and computed
   * (see the class comment). The two sources must describe the same version, and keep answering for
   * it during the call.
   *
   * @param graph input, not modified: in-neighbour rows (sorted), n nodes
   * @param features input, not modified: n nodes' features, the model's input feature count each
   * @param nodes input, not modified: node ids in {@code 0..n-1}, in the order wanted (repeats
   *     allowed)
   * @return one prediction per requested node, in request order, with the field's size
   * @throws IllegalArgumentException if a node id is out of range, the features do not fit (count,
   *     or a value that is not finite), or a row read is not strictly increasing or holds an id out
   *     of range
   * @throws dev.heed.model.ReceptiveFieldTooLargeException if the field passes the field cap
   *     (before any layer runs)
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classifyFromRows(NeighbourRows graph, FeatureRows features, int... nodes) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(nodes, "nodes");
    checkFeatures(features, graph.nodeCount());
    int[] requested = nodes.clone();
    return run(
        running.receptiveField(graph, requested, options.fieldCap()), features, requested, null);
  }

  /**
   * Prepares a scorer bound to one graph and feature matrix that keeps the layer outputs of the
   * graph's hub rows (in-degree at least {@link #DEFAULT_HUB_DEGREE}); see {@link
   * #forStaticGraph(CsrGraph, NodeFeatures, int)}.
   *
   * @param graph the graph, n nodes
   * @param features n × the model's input feature count
   * @return the prepared scorer
   */
  public StaticGraphScorer forStaticGraph(CsrGraph graph, NodeFeatures features) {
    return forStaticGraph(graph, features, DEFAULT_HUB_DEGREE);
  }

  /**
   * Prepares a scorer bound to one graph and feature matrix that keeps the layer outputs of the
   * graph's hub rows (rows of at least {@code minHubDegree} entries, self-loops included), so that
   * each query's work is bounded by about T + T² + … + T^L attention entries for a model of L
   * attention layers (T = {@code minHubDegree}) instead of by the hubs' degrees ({@link
   * StaticGraphScorer}). Both arguments are immutable, so the kept rows stay valid for the scorer's
   * life. Preparation runs the model once over the hubs' receptive field, on this classifier's path
   * and node-row precision, with no field cap; its time and the kept bytes are logged at debug
   * level and reported by the scorer.
   *
   * @param graph input, not modified: the graph, n nodes
   * @param features input, not modified: n × the model's input feature count
   * @param minHubDegree T, at least 1; smaller keeps more rows (more memory, a longer preparation)
   *     and bounds queries tighter
   * @return the prepared scorer
   * @throws IllegalArgumentException if the features do not fit the graph or the model, if {@code
   *     minHubDegree < 1}, or if a layer attends over every node (then any query needs the whole
   *     graph: classify every node once with {@link #classify(AttentionPattern, NodeFeatures)})
   * @throws dev.heed.attention.MemoryBudgetExceededException if the kept rows or the preparation
   *     pass do not fit the heap budget
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public StaticGraphScorer forStaticGraph(CsrGraph graph, NodeFeatures features, int minHubDegree) {
    Objects.requireNonNull(graph, "graph");
    checkFeatures(features, graph.nodeCount());
    long start = System.nanoTime();
    KeptHubRows kept = running.keepHubRows(graph, features.shared(), minHubDegree, options.path());
    Duration took = Duration.ofNanos(System.nanoTime() - start);
    LOG.debug(
        "kept {} hub rows (in-degree >= {}) of {} nodes: {} bytes, prepared in {} ms",
        kept.hubCount(),
        minHubDegree,
        graph.nodeCount(),
        kept.bytes(),
        took.toMillis());
    return new StaticGraphScorer(this, graph, features, kept, took);
  }

  /** The model the calls run (with the options' node-row precision). */
  AttentionModel running() {
    return running;
  }

  private void checkFeatures(FeatureRows features, int graphNodes) {
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
    if (features.nodeCount() != graphNodes) {
      throw new IllegalArgumentException(
          "features have "
              + features.nodeCount()
              + " rows but the graph has "
              + graphNodes
              + " nodes; pass one row per node, in node id order");
    }
  }

  /**
   * Runs the model over the field and builds the predictions, for {@code nodes} in order (every
   * node when null); with a layout, the field is over its renumbered rows and node v's output is at
   * its position.
   */
  Classification run(ReceptiveField field, FeatureRows features, int[] nodes, NodeLayout layout) {
    FieldOutput out =
        running.forward(field, fieldFeatures(field, features), options.path(), options.explain());
    List<String> labels = model.classLabels();
    int k = Math.min(options.topLabels(), labels.size());
    int count = nodes == null ? field.graphNodeCount() : nodes.length;
    List<NodePrediction> predictions = new ArrayList<>(count);
    for (int i = 0; i < count; i++) {
      int node = nodes == null ? i : nodes[i];
      float[] p = out.row(layout == null ? node : layout.position(node));
      List<LabelScore> top = topLabels(p, labels, k);
      List<LayerExplanation> explanation = options.explain() ? explain(out, node) : null;
      predictions.add(new NodePrediction(node, p, top, explanation));
    }
    return new Classification(labels, predictions, out.layerRuns(), field.size());
  }

  /** The feature rows of the field's nodes, in its local order (shared for a whole graph). */
  private static float[] fieldFeatures(ReceptiveField field, FeatureRows features) {
    if (field.wholeGraph() && features instanceof NodeFeatures all) {
      return all.shared();
    }
    int f = features.featureCount();
    int rows = field.nodeCount();
    if ((long) rows * f > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "the receptive field's "
              + rows
              + " nodes × "
              + f
              + " features exceed one Java array; classify fewer nodes per call");
    }
    float[] x = new float[rows * f];
    for (int local = 0; local < rows; local++) {
      features.copyRow(field.nodeId(local), x, local * f);
    }
    return x;
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

  private List<LayerExplanation> explain(FieldOutput out, int node) {
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
