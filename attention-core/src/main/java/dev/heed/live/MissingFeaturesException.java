package dev.heed.live;

/**
 * Thrown when a node's features are read before they were set: a node added without features can
 * take part in edges but cannot be scored. The message names the node's id, index and the
 * snapshot's version; {@link LiveSnapshot#hasFeatures(int)} and {@link
 * LiveSnapshot#missingFeatureCount()} check ahead without an exception.
 *
 * <p>Thread safety: immutable once thrown.
 */
public final class MissingFeaturesException extends IllegalStateException {

  private static final long serialVersionUID = 1L;

  /** The index of the node without features. */
  private final int node;

  MissingFeaturesException(String message, int node) {
    super(message);
    this.node = node;
  }

  /**
   * Returns the index of the node without features.
   *
   * @return the node index in the snapshot that was read
   */
  public int node() {
    return node;
  }
}
