package dev.heed.train.layer;

import dev.heed.model.Layer;
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
   * Exports the layer as the serving layer of the same equations (see {@code
   * docs/model-format.md}), its parameters rounded to float32. Its tensors are named {@code
   * <name>.<role>}.
   *
   * @param name the serving layer's name, unique within its model
   * @return an immutable serving layer, built through the layer kind's builder in {@code
   *     dev.heed.model}
   * @throws IllegalArgumentException if the layer has no exact serving form (the message says why
   *     and how to train one that has)
   */
  Layer export(String name);
}
