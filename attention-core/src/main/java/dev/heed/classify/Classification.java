package dev.heed.classify;

import java.util.List;
import java.util.NoSuchElementException;

/**
 * The result of one {@link NodeClassifier} call: one prediction per requested node, in request
 * order.
 *
 * <p>Thread safety: immutable.
 */
public final class Classification {

  private final List<String> classLabels;
  private final List<NodePrediction> predictions;

  Classification(List<String> classLabels, List<NodePrediction> predictions) {
    this.classLabels = List.copyOf(classLabels);
    this.predictions = List.copyOf(predictions);
  }

  /**
   * Returns the model's class labels; probability index c belongs to label c.
   *
   * @return an unmodifiable list
   */
  public List<String> classLabels() {
    return classLabels;
  }

  /**
   * Returns the predictions in request order (all nodes in id order if no nodes were named).
   *
   * @return an unmodifiable list
   */
  public List<NodePrediction> predictions() {
    return predictions;
  }

  /**
   * Returns the prediction for a node.
   *
   * @param node a node id that was classified
   * @return its prediction (the first, if the node was requested more than once)
   * @throws NoSuchElementException if the node was not classified in this call
   */
  public NodePrediction forNode(int node) {
    if (node >= 0 && node < predictions.size() && predictions.get(node).node() == node) {
      return predictions.get(node);
    }
    for (NodePrediction p : predictions) {
      if (p.node() == node) {
        return p;
      }
    }
    throw new NoSuchElementException("node " + node + " was not classified in this call");
  }
}
