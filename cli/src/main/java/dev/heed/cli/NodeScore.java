package dev.heed.cli;

import dev.heed.classify.NodePrediction;

/**
 * One node's fresh score as {@code heed replay} writes it: the node's index, its top class and
 * every class probability.
 *
 * <p>Thread safety: treat as immutable; nothing modifies {@code probabilities} after construction.
 *
 * @param node the node's index in the snapshot
 * @param labelIndex the most probable class
 * @param label that class's label
 * @param probabilities every class's probability, in the model's label order
 */
record NodeScore(int node, int labelIndex, String label, float[] probabilities) {

  /** The probability of the top class. */
  float probability() {
    return probabilities[labelIndex];
  }

  /** The same score taken from a classifier's prediction. */
  static NodeScore of(NodePrediction p) {
    return new NodeScore(p.node(), p.labelIndex(), p.label(), p.probabilities());
  }
}
