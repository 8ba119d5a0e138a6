package dev.heed.classify;

import dev.heed.model.PathChoice;
import java.util.Objects;

/**
 * Options for {@link NodeClassifier}.
 *
 * <p>Thread safety: immutable.
 *
 * @param path which attention kernel to use
 * @param topLabels how many labels each prediction lists, best first; at least 1 (capped at the
 *     class count)
 * @param explain whether to attach an explanation to each prediction (costs 4·E·heads bytes per
 *     attention layer during the call)
 * @param explainNeighbours how many neighbours an explanation lists per layer (and per head); at
 *     least 1
 */
public record ClassifyOptions(
    PathChoice path, int topLabels, boolean explain, int explainNeighbours) {

  /** Default number of labels per prediction: 3. */
  public static final int DEFAULT_TOP_LABELS = 3;

  /** Default number of neighbours per explained layer: 5. */
  public static final int DEFAULT_EXPLAIN_NEIGHBOURS = 5;

  /**
   * Validates the options.
   *
   * @param path which attention kernel to use
   * @param topLabels labels per prediction, at least 1
   * @param explain whether to explain predictions
   * @param explainNeighbours neighbours per explained layer, at least 1
   * @throws IllegalArgumentException if a count is below 1
   */
  public ClassifyOptions {
    Objects.requireNonNull(path, "path");
    if (topLabels < 1) {
      throw new IllegalArgumentException("topLabels must be at least 1, got " + topLabels);
    }
    if (explainNeighbours < 1) {
      throw new IllegalArgumentException(
          "explainNeighbours must be at least 1, got " + explainNeighbours);
    }
  }

  /**
   * Returns the defaults: {@link PathChoice#AUTO}, 3 labels, no explanations, 5 neighbours.
   *
   * @return the defaults
   */
  public static ClassifyOptions defaults() {
    return new ClassifyOptions(
        PathChoice.AUTO, DEFAULT_TOP_LABELS, false, DEFAULT_EXPLAIN_NEIGHBOURS);
  }

  /**
   * Returns a copy with another path choice.
   *
   * @param newPath the path
   * @return new options
   */
  public ClassifyOptions withPath(PathChoice newPath) {
    return new ClassifyOptions(newPath, topLabels, explain, explainNeighbours);
  }

  /**
   * Returns a copy with another number of top labels.
   *
   * @param k at least 1
   * @return new options
   */
  public ClassifyOptions withTopLabels(int k) {
    return new ClassifyOptions(path, k, explain, explainNeighbours);
  }

  /**
   * Returns a copy that explains each prediction by its {@code k} most-attended neighbours.
   *
   * @param k at least 1
   * @return new options
   */
  public ClassifyOptions withExplanations(int k) {
    return new ClassifyOptions(path, topLabels, true, k);
  }

  /**
   * Returns a copy without explanations.
   *
   * @return new options
   */
  public ClassifyOptions withoutExplanations() {
    return new ClassifyOptions(path, topLabels, false, explainNeighbours);
  }
}
