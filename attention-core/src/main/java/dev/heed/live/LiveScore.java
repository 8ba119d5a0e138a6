package dev.heed.live;

import java.util.Objects;
import java.util.Optional;

/**
 * One node's score from an {@link IncrementalScorer}: its state, and for a {@link ScoreState#FRESH}
 * node the class probabilities and top label, exact for {@link #version()}.
 *
 * <p>Thread safety: immutable; {@link #probabilities()} returns a copy.
 *
 * @param <K> the type of the caller's node ids
 */
public final class LiveScore<K> {

  private static final float[] NONE = new float[0];

  private final K node;
  private final int nodeIndex;
  private final ScoreState state;
  private final float[] probabilities;
  private final int topClass;
  private final String topLabel;
  private final long version;

  LiveScore(
      K node,
      int nodeIndex,
      ScoreState state,
      float[] probabilities,
      int topClass,
      String topLabel,
      long version) {
    this.node = Objects.requireNonNull(node, "node");
    this.nodeIndex = nodeIndex;
    this.state = state;
    this.probabilities = probabilities == null ? NONE : probabilities;
    this.topClass = topClass;
    this.topLabel = topLabel;
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
   * Returns the node's index in the live graph, or -1 for a node the scorer has not ingested yet.
   *
   * @return the index
   */
  public int nodeIndex() {
    return nodeIndex;
  }

  /**
   * Returns where the score stands.
   *
   * @return the state
   */
  public ScoreState state() {
    return state;
  }

  /**
   * Returns whether the score is {@link ScoreState#FRESH}.
   *
   * @return true if the probabilities are given and exact for {@link #version()}
   */
  public boolean isFresh() {
    return state == ScoreState.FRESH;
  }

  /**
   * Returns the class probabilities, in the model's label order.
   *
   * @return a new array: one value per class for a fresh score, empty otherwise
   */
  public float[] probabilities() {
    return probabilities.clone();
  }

  /**
   * Returns the index of the most probable class (the lowest index among equal ones).
   *
   * @return the class index, or -1 unless fresh
   */
  public int topClass() {
    return topClass;
  }

  /**
   * Returns the most probable class's label.
   *
   * @return the label, or empty unless fresh
   */
  public Optional<String> topLabel() {
    return Optional.ofNullable(topLabel);
  }

  /**
   * Returns the graph version this answer is for: the version the scorer had ingested when it
   * answered. A fresh score equals a full pass over that version.
   *
   * @return the version
   */
  public long version() {
    return version;
  }

  @Override
  public String toString() {
    return "LiveScore["
        + node
        + ", "
        + state
        + (topLabel == null ? "" : ", " + topLabel)
        + ", version "
        + version
        + "]";
  }
}
