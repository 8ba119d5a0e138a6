package dev.heed.live;

import java.util.Objects;
import java.util.OptionalDouble;

/**
 * A node's probability of one class crossed a threshold between two fresh scores of an {@link
 * IncrementalScorer}. Upward: from below the threshold (or from no score) to at least it; downward:
 * from at least the threshold to below it. Delivered to listeners registered with {@link
 * IncrementalScorer#onThreshold}.
 *
 * <p>Thread safety: immutable.
 *
 * @param <K> the type of the caller's node ids
 */
public final class ThresholdCrossing<K> {

  /** Which way the probability crossed the threshold. */
  public enum Direction {
    /** From below the threshold (or no score) to at least the threshold. */
    UPWARD,
    /** From at least the threshold to below it. */
    DOWNWARD
  }

  private final K node;
  private final int nodeIndex;
  private final String classLabel;
  private final float threshold;
  private final float previousProbability; // NaN: no previous score
  private final float probability;
  private final long version;

  ThresholdCrossing(
      K node,
      int nodeIndex,
      String classLabel,
      float threshold,
      float previousProbability,
      float probability,
      long version) {
    this.node = Objects.requireNonNull(node, "node");
    this.nodeIndex = nodeIndex;
    this.classLabel = classLabel;
    this.threshold = threshold;
    this.previousProbability = previousProbability;
    this.probability = probability;
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
   * Returns the class whose probability crossed.
   *
   * @return the label
   */
  public String classLabel() {
    return classLabel;
  }

  /**
   * Returns the subscription's threshold.
   *
   * @return the threshold
   */
  public float threshold() {
    return threshold;
  }

  /**
   * Returns the class's probability in the node's previous fresh score.
   *
   * @return the probability, or empty when the node had no score before
   */
  public OptionalDouble previousProbability() {
    return Float.isNaN(previousProbability)
        ? OptionalDouble.empty()
        : OptionalDouble.of(previousProbability);
  }

  /**
   * Returns the class's new probability.
   *
   * @return the probability
   */
  public float probability() {
    return probability;
  }

  /**
   * Returns which way the probability crossed.
   *
   * @return the direction
   */
  public Direction direction() {
    return probability >= threshold ? Direction.UPWARD : Direction.DOWNWARD;
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
    return "ThresholdCrossing["
        + node
        + ", "
        + classLabel
        + " "
        + direction()
        + " "
        + threshold
        + ": "
        + previousProbability
        + " -> "
        + probability
        + " @"
        + version
        + "]";
  }
}
