package dev.heed.classify;

import dev.heed.attention.NodeRowPrecision;
import dev.heed.model.FieldCap;
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
 * @param fieldCap bounds on the receptive field one call may compute over (nodes read, attention
 *     entries touched); a call whose field passes it fails with {@link
 *     dev.heed.model.ReceptiveFieldTooLargeException} before any layer runs. The bounds apply to
 *     whole-graph calls too (classifying every node: n nodes). Default {@link FieldCap#NONE}
 * @param nodeRowPrecision how the sparse kernel stores the node rows it gathers ({@link
 *     NodeRowPrecision}: where it applies and its error bound); replaces the model's kernel option
 *     for this classifier's calls. Default {@link NodeRowPrecision#FLOAT32}
 */
public record ClassifyOptions(
    PathChoice path,
    int topLabels,
    boolean explain,
    int explainNeighbours,
    FieldCap fieldCap,
    NodeRowPrecision nodeRowPrecision) {

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
   * @param fieldCap bounds on each call's receptive field
   * @param nodeRowPrecision how the sparse kernel stores gathered node rows
   * @throws IllegalArgumentException if a count is below 1
   */
  public ClassifyOptions {
    Objects.requireNonNull(path, "path");
    Objects.requireNonNull(fieldCap, "fieldCap");
    Objects.requireNonNull(nodeRowPrecision, "nodeRowPrecision");
    if (topLabels < 1) {
      throw new IllegalArgumentException("topLabels must be at least 1, got " + topLabels);
    }
    if (explainNeighbours < 1) {
      throw new IllegalArgumentException(
          "explainNeighbours must be at least 1, got " + explainNeighbours);
    }
  }

  /**
   * Creates options without a field cap ({@link FieldCap#NONE}).
   *
   * @param path which attention kernel to use
   * @param topLabels labels per prediction, at least 1
   * @param explain whether to explain predictions
   * @param explainNeighbours neighbours per explained layer, at least 1
   * @throws IllegalArgumentException if a count is below 1
   */
  public ClassifyOptions(PathChoice path, int topLabels, boolean explain, int explainNeighbours) {
    this(path, topLabels, explain, explainNeighbours, FieldCap.NONE);
  }

  /**
   * Creates options with float32 node rows ({@link NodeRowPrecision#FLOAT32}).
   *
   * @param path which attention kernel to use
   * @param topLabels labels per prediction, at least 1
   * @param explain whether to explain predictions
   * @param explainNeighbours neighbours per explained layer, at least 1
   * @param fieldCap bounds on each call's receptive field
   * @throws IllegalArgumentException if a count is below 1
   */
  public ClassifyOptions(
      PathChoice path, int topLabels, boolean explain, int explainNeighbours, FieldCap fieldCap) {
    this(path, topLabels, explain, explainNeighbours, fieldCap, NodeRowPrecision.FLOAT32);
  }

  /**
   * Returns the defaults: {@link PathChoice#AUTO}, 3 labels, no explanations, 5 neighbours, no
   * field cap, float32 node rows.
   *
   * @return the defaults
   */
  public static ClassifyOptions defaults() {
    return new ClassifyOptions(
        PathChoice.AUTO,
        DEFAULT_TOP_LABELS,
        false,
        DEFAULT_EXPLAIN_NEIGHBOURS,
        FieldCap.NONE,
        NodeRowPrecision.FLOAT32);
  }

  /**
   * Returns a copy with another path choice.
   *
   * @param newPath the path
   * @return new options
   */
  public ClassifyOptions withPath(PathChoice newPath) {
    return new ClassifyOptions(
        newPath, topLabels, explain, explainNeighbours, fieldCap, nodeRowPrecision);
  }

  /**
   * Returns a copy with another number of top labels.
   *
   * @param k at least 1
   * @return new options
   */
  public ClassifyOptions withTopLabels(int k) {
    return new ClassifyOptions(path, k, explain, explainNeighbours, fieldCap, nodeRowPrecision);
  }

  /**
   * Returns a copy that explains each prediction by its {@code k} most-attended neighbours.
   *
   * @param k at least 1
   * @return new options
   */
  public ClassifyOptions withExplanations(int k) {
    return new ClassifyOptions(path, topLabels, true, k, fieldCap, nodeRowPrecision);
  }

  /**
   * Returns a copy without explanations.
   *
   * @return new options
   */
  public ClassifyOptions withoutExplanations() {
    return new ClassifyOptions(
        path, topLabels, false, explainNeighbours, fieldCap, nodeRowPrecision);
  }

  /**
   * Returns a copy with another receptive-field cap, for example {@code
   * withFieldCap(FieldCap.NONE.withMaxNodes(100_000))}.
   *
   * @param cap the bounds ({@link FieldCap#NONE} for none)
   * @return new options
   */
  public ClassifyOptions withFieldCap(FieldCap cap) {
    return new ClassifyOptions(path, topLabels, explain, explainNeighbours, cap, nodeRowPrecision);
  }

  /**
   * Returns a copy whose calls store the node rows the sparse kernel gathers at another precision,
   * for example {@code withNodeRowPrecision(NodeRowPrecision.BFLOAT16)}: fewer bytes per neighbour
   * on large graphs, with the error bound of {@link NodeRowPrecision#BFLOAT16}.
   *
   * @param precision the precision
   * @return new options
   */
  public ClassifyOptions withNodeRowPrecision(NodeRowPrecision precision) {
    return new ClassifyOptions(path, topLabels, explain, explainNeighbours, fieldCap, precision);
  }
}
