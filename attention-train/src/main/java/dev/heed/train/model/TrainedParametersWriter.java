package dev.heed.train.model;

import java.io.IOException;

/**
 * Writes trained parameters somewhere: the seam where the Heed model file writer plugs in.
 *
 * <p>Thread safety: as stated by each implementation.
 */
@FunctionalInterface
public interface TrainedParametersWriter {

  /**
   * Writes the parameters.
   *
   * @param parameters input, not modified
   * @throws IOException if writing fails
   */
  void write(TrainedParameters parameters) throws IOException;
}
