package dev.heed.classify;

import dev.heed.graph.CsrGraph;
import dev.heed.model.KeptHubRows;
import dev.heed.model.ReceptiveField;
import java.time.Duration;
import java.util.Objects;

/**
 * Scores chosen nodes of one fixed graph and feature matrix exactly, with the layer outputs of the
 * graph's hub rows (rows of high in-degree) computed once, when the scorer is prepared ({@link
 * NodeClassifier#forStaticGraph}). A query plans its targets' receptive field as {@link
 * NodeClassifier#classify(dev.heed.graph.AttentionPattern, NodeFeatures, int...)} does, but stops
 * at every hub: a hub's output of a layer is read from the kept rows, so its in-neighbours are not
 * read. The probabilities equal a whole-graph pass's (and the plain call's) up to float rounding.
 *
 * <pre>{@code
 * StaticGraphScorer scorer = NodeClassifier.of(model).forStaticGraph(graph, features);
 * Classification result = scorer.classify(42);   // about T + T² entries at most, for 2 layers
 * int keptRowsRead = result.fieldSize().keptRows();
 * }</pre>
 *
 * <p><b>Cost of a query.</b> A row of in-degree below T = {@link #minHubDegree()} is computed from
 * its sources; each source is kept or again has fewer than T sources. So a target that is not a hub
 * computes at most about T + T² + … + T^L attention entries, and reads as many nodes, for a model
 * of L attention layers, whatever the degrees of the hubs around it; a hub target is a lookup of
 * its kept output. When the classifier explains its predictions, every target is computed from its
 * inputs instead (the explanation needs the target's attention weights), so explaining a hub target
 * of in-degree d costs about d·T + d entries for 2 layers; the kept rows of its sources are still
 * used. The classifier's field cap applies to every query (kept rows count as nodes read).
 *
 * <p><b>Preparation.</b> One model pass over the hubs' receptive field (on an R-MAT graph, most of
 * the graph; see {@link #preparationTime()}), keeping {@link #keptBytes()} bytes: 4 per graph node
 * and 4 per kept output value (the output of every attention stage and the class probabilities, per
 * hub). The graph ({@link CsrGraph}) and the features ({@link NodeFeatures}) are immutable, so the
 * kept rows stay valid for the scorer's life; a graph or features that change need a new scorer (or
 * {@link dev.heed.live.IncrementalScorer}).
 *
 * <p>Thread safety: immutable; one prepared scorer may serve any number of threads at once (each
 * query plans with pooled scratch and computes with arrays of its own, as {@link NodeClassifier}
 * does).
 */
public final class StaticGraphScorer {

  private final NodeClassifier classifier;
  private final CsrGraph graph;
  private final NodeFeatures features;
  private final KeptHubRows kept;
  private final Duration preparationTime;

  StaticGraphScorer(
      NodeClassifier classifier,
      CsrGraph graph,
      NodeFeatures features,
      KeptHubRows kept,
      Duration preparationTime) {
    this.classifier = classifier;
    this.graph = graph;
    this.features = features;
    this.kept = kept;
    this.preparationTime = preparationTime;
  }

  /**
   * Classifies chosen nodes over their receptive fields, stopping at kept hub rows (see the class
   * comment).
   *
   * @param nodes input, not modified: node ids in {@code 0..n-1}, in the order wanted (repeats
   *     allowed)
   * @return one prediction per requested node, in request order; the field's size counts the nodes
   *     read (kept ones included), the entries computed and the kept rows read ({@link
   *     dev.heed.model.FieldSize#keptRows()})
   * @throws IllegalArgumentException if a node id is out of range (the message gives its position)
   * @throws dev.heed.model.ReceptiveFieldTooLargeException if the field passes the classifier's
   *     field cap (before any layer runs)
   * @throws IllegalStateException if the chosen path's kernel is not on the class path
   */
  public Classification classify(int... nodes) {
    Objects.requireNonNull(nodes, "nodes");
    int[] requested = nodes.clone();
    ClassifyOptions options = classifier.options();
    ReceptiveField field =
        classifier
            .running()
            .receptiveField(graph, requested, options.fieldCap(), kept, options.explain());
    return classifier.run(field, features, requested, null);
  }

  /**
   * Returns the classifier whose model and options the queries use.
   *
   * @return the classifier
   */
  public NodeClassifier classifier() {
    return classifier;
  }

  /**
   * Returns the graph the scorer is bound to.
   *
   * @return the graph
   */
  public CsrGraph graph() {
    return graph;
  }

  /**
   * Returns the features the scorer is bound to.
   *
   * @return the features
   */
  public NodeFeatures features() {
    return features;
  }

  /**
   * Returns T: rows with at least this many entries (in-degree, self-loop included) are kept.
   *
   * @return the threshold
   */
  public int minHubDegree() {
    return kept.minInDegree();
  }

  /**
   * Returns the number of hub rows kept.
   *
   * @return the count
   */
  public int keptRowCount() {
    return kept.hubCount();
  }

  /**
   * Returns the bytes the kept rows hold (4 per graph node and 4 per kept value).
   *
   * @return the bytes
   */
  public long keptBytes() {
    return kept.bytes();
  }

  /**
   * Returns how long preparing the kept rows took (wall-clock time).
   *
   * @return the duration
   */
  public Duration preparationTime() {
    return preparationTime;
  }

  @Override
  public String toString() {
    return "StaticGraphScorer["
        + graph.nodeCount()
        + " nodes, "
        + kept
        + ", prepared in "
        + preparationTime.toMillis()
        + " ms]";
  }
}
