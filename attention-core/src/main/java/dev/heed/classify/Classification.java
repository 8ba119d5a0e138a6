package dev.heed.classify;

import dev.heed.model.LayerRun;
import dev.heed.model.ModelOutput;
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
  private final List<LayerRun> layerRuns;

  Classification(
      List<String> classLabels, List<NodePrediction> predictions, List<LayerRun> layerRuns) {
    this.classLabels = List.copyOf(classLabels);
    this.predictions = List.copyOf(predictions);
    this.layerRuns = List.copyOf(layerRuns);
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
   * Returns how each model layer ran in this call: the attention path it took and its wall-clock
   * time (see {@link ModelOutput#layerRuns()}).
   *
   * @return an unmodifiable list, one entry per model layer in order
   */
  public List<LayerRun> layerRuns() {
    return layerRuns;
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
