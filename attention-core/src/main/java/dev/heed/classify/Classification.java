package dev.heed.classify;

import dev.heed.model.FieldSize;
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
  private final FieldSize fieldSize;

  Classification(
      List<String> classLabels,
      List<NodePrediction> predictions,
      List<LayerRun> layerRuns,
      FieldSize fieldSize) {
    this.classLabels = List.copyOf(classLabels);
    this.predictions = List.copyOf(predictions);
    this.layerRuns = List.copyOf(layerRuns);
    this.fieldSize = fieldSize;
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
   * Returns the size of the receptive field this call computed over: distinct targets, nodes read,
   * attention entries touched, and whether it ran over the whole graph (per layer: {@link
   * #layerRuns()}).
   *
   * @return the size
   */
  public FieldSize fieldSize() {
    return fieldSize;
  }

  /**
   * Returns whether this call ran every layer over every node of the graph: every node was
   * classified, the graph was a complete pattern, or the model has a layer that attends over every
   * node (full self-attention), so no smaller field gives the same outputs.
   *
   * @return true for a whole-graph call
   */
  public boolean wholeGraph() {
    return fieldSize.wholeGraph();
  }

  /**
   * Returns how each model layer ran in this call: the attention path it took, its wall-clock time,
   * and the rows and attention entries it computed (see {@link ModelOutput#layerRuns()}).
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
