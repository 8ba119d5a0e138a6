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

  static SoftmaxLayer read(LayerReader r) throws ModelFormatException {
    r.finish();
    return new SoftmaxLayer(r.name, r.inputWidth);
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
