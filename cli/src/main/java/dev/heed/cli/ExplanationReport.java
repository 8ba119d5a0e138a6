package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.model.Layer;
import dev.heed.model.PathChoice;
import dev.heed.model.SelfAttentionLayer;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.stream.IntStream;

/**
 * What the HTML report shows, computed once and written by {@link HtmlReport}: for each chosen
 * node, its class probabilities and the nodes the model's last attention layer weighted most (mean
 * over heads, as the CSV explanations), with their predicted labels and the graph's edges among
 * them.
 *
 * <p>Thread safety: immutable once built (the arrays inside are not copied and never changed).
 *
 * @param modelName the model file's name
 * @param graphName the graph file's name
 * @param nodeCount nodes in the graph
 * @param labels the model's class labels
 * @param focusClass the label the report ranks by and highlights
 * @param selection how the nodes were chosen, as a sentence fragment
 * @param layerName the last attention layer's name, or null when the model has none
 * @param layerHeads that layer's heads (0 when none)
 * @param cards one per node shown, in the report's order
 */
record ExplanationReport(
    String modelName,
    String graphName,
    int nodeCount,
    List<String> labels,
    int focusClass,
    String selection,
    String layerName,
    int layerHeads,
    List<Card> cards) {

  /**
   * One node of the report.
   *
   * @param rank its position in the report, from 1
   * @param id the node's id as in the input files
   * @param labelIndex its predicted label
   * @param probabilities every label's probability, in the model's order
   * @param selfWeight the weight it gave itself, or -1 when itself is not among the drawn nodes
   * @param neighbours the other nodes drawn, heaviest first
   * @param links pairs of indices into {@code neighbours} joined by a graph edge (either way)
   * @param attended how many nodes the layer lets it attend to (its graph row, or every node)
   * @param otherWeight the weight of the attended nodes not drawn, together
   */
  record Card(
      int rank,
      String id,
      int labelIndex,
      float[] probabilities,
      float selfWeight,
      List<Neighbour> neighbours,
      List<int[]> links,
      int attended,
      float otherWeight) {

    /** How many attended nodes are not drawn. */
    int otherCount() {
      return Math.max(0, attended - neighbours.size() - (selfWeight >= 0 ? 1 : 0));
    }
  }

  /**
   * A node drawn around a report node.
   *
   * @param id its id as in the input files
   * @param weight the attention weight the report node gave it (mean over heads)
   * @param labelIndex its own predicted label
   * @param probability the probability of that label
   */
  record Neighbour(String id, float weight, int labelIndex, float probability) {}

  /**
   * Chooses the report's nodes, explains them and gathers what the page shows.
   *
   * @param run the loaded graph, features and model
   * @param ranking predictions of every node (used when {@code chosen} is null, to rank them)
   * @param chosen the {@code --nodes} indices (repeats shown once), or null to rank by {@code
   *     focusClass}
   * @param focusClass the label to rank by and highlight
   * @param top how many nodes to show when ranking
   * @param neighbours how many attended nodes to draw per node
   * @param path the attention path, as for the predictions
   * @param modelName the model's name for the page
   * @param graphName the graph's name for the page
   * @return the report's content
   */
  static ExplanationReport build(
      ClassifyRun run,
      Classification ranking,
      int[] chosen,
      int focusClass,
      int top,
      int neighbours,
      PathChoice path,
      String modelName,
      String graphName) {
    List<String> labels = run.model().classLabels();
    int n = run.graph().nodeCount();
    int[] shown;
    String selection;
    if (chosen != null) {
      shown =
          new LinkedHashSet<>(IntStream.of(chosen).boxed().toList())
              .stream().mapToInt(Integer::intValue).toArray();
      if (shown.length > ClassifyOutputOptions.MAX_REPORT_NODES) {
        throw new CliException(
            "--report shows at most "
                + ClassifyOutputOptions.MAX_REPORT_NODES
                + " nodes, but --nodes names "
                + shown.length
                + "; name fewer, or use --out for every prediction",
            HeedCli.EXIT_USAGE);
      }
      selection = "the " + count(shown.length, "node") + " named with --nodes";
    } else {
      shown =
          ranking.predictions().stream()
              .sorted(
                  Comparator.comparingDouble((NodePrediction p) -> -p.probabilities()[focusClass])
                      .thenComparingInt(NodePrediction::node))
              .limit(top)
              .mapToInt(NodePrediction::node)
              .toArray();
      selection =
          String.format(
              Locale.ROOT,
              "the %s of %,d with the highest probability of %s",
              count(shown.length, "node"),
              n,
              labels.get(focusClass));
    }
    Classification explained = run.classify(shown, path, neighbours);
    Map<Integer, NodePrediction> predictionOf =
        neighbourPredictions(run, explained, chosen == null ? ranking : null, path);

    Layer lastAttention =
        run.model().layers().stream()
            .filter(l -> l.attentionHeads() > 0)
            .reduce((a, b) -> b)
            .orElse(null);
    List<Card> cards = new ArrayList<>(shown.length);
    for (NodePrediction p : explained.predictions()) {
      cards.add(card(cards.size() + 1, p, lastAttention, run, predictionOf));
    }
    return new ExplanationReport(
        modelName,
        graphName,
        n,
        labels,
        focusClass,
        selection,
        lastAttention == null ? null : lastAttention.name(),
        lastAttention == null ? 0 : lastAttention.attentionHeads(),
        List.copyOf(cards));
  }

  /** Predictions of the drawn nodes: from {@code all} when given, else from one more call. */
  private static Map<Integer, NodePrediction> neighbourPredictions(
      ClassifyRun run, Classification explained, Classification all, PathChoice path) {
    Set<Integer> drawn = new LinkedHashSet<>();
    for (NodePrediction p : explained.predictions()) {
      for (NeighbourWeight w : ClassifyRun.lastLayerNeighbours(p)) {
        drawn.add(w.node());
      }
    }
    Map<Integer, NodePrediction> byNode = new HashMap<>();
    if (all != null) {
      for (int node : drawn) {
        byNode.put(node, all.forNode(node));
      }
    } else if (!drawn.isEmpty()) {
      int[] nodes = drawn.stream().mapToInt(Integer::intValue).toArray();
      for (NodePrediction p : run.classify(nodes, path, 0).predictions()) {
        byNode.put(p.node(), p);
      }
    }
    return byNode;
  }

  private static Card card(
      int rank,
      NodePrediction p,
      Layer layer,
      ClassifyRun run,
      Map<Integer, NodePrediction> predictionOf) {
    CsrGraph graph = run.graph();
    float selfWeight = -1;
    float drawnWeight = 0;
    List<Neighbour> neighbours = new ArrayList<>();
    List<Integer> nodes = new ArrayList<>();
    for (NeighbourWeight w : ClassifyRun.lastLayerNeighbours(p)) {
      drawnWeight += w.weight();
      if (w.node() == p.node()) {
        selfWeight = w.weight();
        continue;
      }
      NodePrediction q = predictionOf.get(w.node());
      neighbours.add(
          new Neighbour(run.nodes().idOf(w.node()), w.weight(), q.labelIndex(), q.probability()));
      nodes.add(w.node());
    }
    List<int[]> links = new ArrayList<>();
    for (int i = 0; i < nodes.size(); i++) {
      for (int j = i + 1; j < nodes.size(); j++) {
        if (graph.allows(nodes.get(i), nodes.get(j)) || graph.allows(nodes.get(j), nodes.get(i))) {
          links.add(new int[] {i, j});
        }
      }
    }
    int attended =
        layer == null
            ? 0
            : layer instanceof SelfAttentionLayer s && s.attendsToAllNodes()
                ? graph.nodeCount()
                : graph.degree(p.node());
    return new Card(
        rank,
        run.nodes().idOf(p.node()),
        p.labelIndex(),
        p.probabilities(),
        selfWeight,
        List.copyOf(neighbours),
        List.copyOf(links),
        attended,
        Math.max(0f, 1f - drawnWeight));
  }

  private static String count(int n, String noun) {
    return n + " " + noun + (n == 1 ? "" : "s");
  }
}
