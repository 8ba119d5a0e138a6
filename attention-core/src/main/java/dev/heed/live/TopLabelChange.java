package dev.heed.live;

import java.util.Objects;
import java.util.Optional;

/**
 * A node's most probable class changed between two fresh scores of an {@link IncrementalScorer} (or
 * the node was scored for the first time). Delivered to listeners registered with {@link
 * IncrementalScorer#onTopLabelChange}.
 *
 * <p>Thread safety: immutable.
 *
 * @param <K> the type of the caller's node ids
 */
public final class TopLabelChange<K> {

  private final K node;
  private final int nodeIndex;
  private final String previousLabel;
  private final String label;
  private final long version;

  TopLabelChange(K node, int nodeIndex, String previousLabel, String label, long version) {
    this.node = Objects.requireNonNull(node, "node");
    this.nodeIndex = nodeIndex;
    this.previousLabel = previousLabel;
    this.label = Objects.requireNonNull(label, "label");
    this.version = version;
  }

  /**
   * Returns the node's id.
   *
   * @return the id
   */
  public K node() {
    return node;
  }

  /**
   * Returns the node's index in the live graph.
   *
   * @return the index
   */
  public int nodeIndex() {
    return nodeIndex;
  }

  /**
   * Returns the top label of the node's previous fresh score.
   *
   * @return the label, or empty when the node had no score before (new, or not scorable until now)
   */
  public Optional<String> previousLabel() {
    return Optional.ofNullable(previousLabel);
  }

  /**
   * Returns the new top label.
   *
   * @return the label
   */
  public String label() {
    return label;
  }

  /**
   * Returns the graph version of the new score.
   *
   * @return the version
   */
  public long version() {
    return version;
  }

  @Override
  public String toString() {
    return "TopLabelChange[" + node + ": " + previousLabel + " -> " + label + " @" + version + "]";
  }
}
