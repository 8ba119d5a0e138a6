package dev.heed.classify;

import java.util.List;
import java.util.Optional;

/**
 * The classification of one node: every class probability, the predicted label (the most probable;
 * ties go to the label listed first), the top labels, and, if requested, an explanation: for each
 * attention layer in model order, the neighbours the node attended to most.
 *
 * <p>Thread safety: immutable; {@link #probabilities()} returns a copy.
 */
public final class NodePrediction {

  private final int node;
  private final float[] probabilities;
  private final List<LabelScore> topLabels;
  private final List<LayerExplanation> explanation;

  NodePrediction(
      int node,
      float[] probabilities,
      List<LabelScore> topLabels,
      List<LayerExplanation> explanation) {
    this.node = node;
    this.probabilities = probabilities;
    this.topLabels = List.copyOf(topLabels);
    this.explanation = explanation == null ? null : List.copyOf(explanation);
  }

  /**
   * Returns the node id.
   *
   * @return the node
   */
  public int node() {
    return node;
  }

  /**
   * Returns the predicted label, the most probable one.
   *
   * @return the label text
   */
  public String label() {
    return topLabels.get(0).label();
  }

  /**
   * Returns the index of the predicted label in the model's class labels.
   *
   * @return the index
   */
  public int labelIndex() {
    return topLabels.get(0).index();
  }

  /**
   * Returns the probability of the predicted label.
   *
   * @return a value in [0, 1]
   */
  public float probability() {
    return topLabels.get(0).probability();
  }

  /**
   * Returns the probability of every class, in the model's label order.
   *
   * @return a new array
   */
  public float[] probabilities() {
    return probabilities.clone();
  }

  /**
   * Returns the most probable labels, best first (ties: earlier label first).
   *
   * @return an unmodifiable list of {@code min(k, classes)} labels
   */
  public List<LabelScore> topLabels() {
    return topLabels;
  }

  /**
   * Returns the explanation, one entry per attention layer in model order, if one was requested.
   *
   * @return the per-layer explanations, or empty if explanations were not requested
   */
  public Optional<List<LayerExplanation>> explanation() {
    return Optional.ofNullable(explanation);
  }

  @Override
  public String toString() {
    return "node " + node + ": " + label() + " (" + probability() + ")";
  }
}
