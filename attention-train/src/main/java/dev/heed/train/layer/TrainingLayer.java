package dev.heed.train.layer;

import dev.heed.train.model.TrainedLayer;
import java.util.List;
import java.util.SplittableRandom;

/**
 * One layer of a network under training, with a forward-cache / backward contract:
 *
 * <ol>
 *   <li>{@link #forward} computes the output of all n nodes and keeps what the backward pass needs
 *       (its inputs, dropout masks, attention weights, pre-activations);
 *   <li>{@link #backward} must follow the matching forward; it adds this layer's parameter
 *       gradients into {@link Parameter#gradient()} and returns the gradient with respect to the
 *       layer's input.
 * </ol>
 *
 * <p>All arrays are float64, node-major: row {@code i} of an {@code n × width} matrix is {@code [i
 * * width, (i + 1) * width)}.
 *
 * <p>Thread safety: implementations are mutable and not thread-safe.
 */
public interface TrainingLayer {

  /**
   * Returns the input width per node.
   *
   * @return the width
   */
  int inputWidth();

  /**
   * Returns the output width per node.
   *
   * @return the width
   */
  int outputWidth();

  /**
   * Sets every parameter to its initial value, drawing from {@code random} in a fixed order.
   *
   * @param random the initialization random source (consumed)
   */
  void initialize(SplittableRandom random);

  /**
   * Computes the layer's output and caches what {@link #backward} needs.
   *
   * @param input input, not modified: {@code n * inputWidth()}, n = the pattern's node count
   * @param context the pass: graph, attention forward pass, dropout
   * @return a new array, {@code n * outputWidth()}
   * @throws IllegalArgumentException if {@code input} has the wrong length
   */
  double[] forward(double[] input, PassContext context);

  /**
   * Back-propagates through the last forward pass, with the input gradient.
   *
   * @param outputGradient input, not modified: dLoss/dOutput, {@code n * outputWidth()}
   * @return a new array, dLoss/dInput, {@code n * inputWidth()}
   * @throws IllegalStateException if no forward pass preceded it
   */
  default double[] backward(double[] outputGradient) {
    return backward(outputGradient, true);
  }

  /**
   * Back-propagates through the last forward pass. The first layer of a network skips the input
   * gradient, which for wide features is as costly as the weight gradient.
   *
   * @param outputGradient input, not modified: dLoss/dOutput, {@code n * outputWidth()}
   * @param inputGradient whether to compute dLoss/dInput
   * @return a new array, dLoss/dInput, {@code n * inputWidth()}; null if not requested
   * @throws IllegalStateException if no forward pass preceded it
   */
  double[] backward(double[] outputGradient, boolean inputGradient);

  /**
   * Returns the trainable parameters, in a fixed order.
   *
   * @return an unmodifiable list of the live parameters
   */
  List<Parameter> parameters();

  /**
   * Exports the layer: hyper-parameters and parameter values rounded to float32.
   *
   * @return a plain, immutable description of the trained layer
   */
  TrainedLayer export();
}
