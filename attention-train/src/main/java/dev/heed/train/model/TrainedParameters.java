package dev.heed.train.model;

import java.util.List;

/**
 * A trained network in plain form, layers in order from input to output, ready to be mapped onto
 * the Heed model file format.
 *
 * <p>Thread safety: immutable.
 *
 * @param inputWidth features per node the network reads
 * @param classCount number of classes the output layer scores
 * @param layers the layers, input first
 */
public record TrainedParameters(int inputWidth, int classCount, List<TrainedLayer> layers) {

  /**
   * Copies the layer list into an unmodifiable one.
   *
   * @param inputWidth see the record description
   * @param classCount see the record description
   * @param layers see the record description
   * @throws IllegalArgumentException if a width is below 1 or there are no layers
   */
  public TrainedParameters {
    if (inputWidth < 1 || classCount < 1) {
      throw new IllegalArgumentException(
          "inputWidth and classCount must be >= 1, got " + inputWidth + " and " + classCount);
    }
    layers = List.copyOf(layers);
    if (layers.isEmpty()) {
      throw new IllegalArgumentException("a trained network needs at least one layer");
    }
  }
}
