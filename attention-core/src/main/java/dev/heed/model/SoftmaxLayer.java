package dev.heed.model;

import com.fasterxml.jackson.databind.node.ObjectNode;
import java.util.Map;

/**
 * The classification head: a softmax over each node's features, turning class scores into
 * probabilities ({@code p_ic = exp(x_ic) / Σ_c' exp(x_ic')}, row maximum subtracted first, common
 * practice). It has no tensors, must be the model's last layer, and its width must equal the number
 * of class labels. Put a {@link DenseLayer} before it for a linear classifier, or end the attention
 * stack with as many features as classes (the GAT paper's output layer).
 *
 * <p>Cost per call: O(n·classes).
 *
 * <p>Thread safety: immutable.
 */
public final class SoftmaxLayer extends Layer {

  /** The kind written in model files. */
  public static final String KIND = "softmax";

  private SoftmaxLayer(String name, int width) {
    super(name, width, width);
  }

  /**
   * Creates the classification head.
   *
   * @param name the layer's name, unique within its model, not empty
   * @param width the number of classes, at least 1
   * @return the layer
   * @throws IllegalArgumentException if the name is empty or the width below 1
   */
  public static SoftmaxLayer of(String name, int width) {
    return build(new LayerParts(KIND, name), width);
  }

  static SoftmaxLayer read(LayerReader r) throws ModelFormatException {
    LayerParts parts = new LayerParts(KIND, r.name);
    return r.build(parts, () -> build(parts, r.inputWidth));
  }

  private static SoftmaxLayer build(LayerParts parts, int width) {
    parts.checkPositive("width", width);
    parts.finish(); // a softmax takes no tensors
    return new SoftmaxLayer(parts.name, width);
  }

  @Override
  public String kind() {
    return KIND;
  }

  @Override
  float[] forward(float[] input, ForwardPass pass) {
    float[] y = input.clone();
    ModelMath.softmaxRows(y, inputWidth());
    return y;
  }

  @Override
  Map<String, Tensor> tensors() {
    return Map.of();
  }

  @Override
  void writeHyperParameters(ObjectNode json) {
    // no hyper-parameters
  }
}
