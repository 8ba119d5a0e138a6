package dev.heed.train.layer;

import dev.heed.graph.AttentionPattern;
import dev.heed.train.attention.AttentionForward;
import java.util.Objects;
import java.util.SplittableRandom;

/**
 * What one forward pass of a network needs besides its input: the graph, the attention forward
 * pass, whether this is a training pass (dropout on) and the random source that draws dropout
 * masks.
 *
 * <p>Thread safety: not thread-safe (the random source is consumed); one pass at a time.
 */
public final class PassContext {

  private final AttentionPattern pattern;
  private final AttentionForward attention;
  private final boolean training;
  private final SplittableRandom random;

  private PassContext(
      AttentionPattern pattern,
      AttentionForward attention,
      boolean training,
      SplittableRandom random) {
    this.pattern = Objects.requireNonNull(pattern, "pattern");
    this.attention = Objects.requireNonNull(attention, "attention");
    this.training = training;
    this.random = random;
  }

  /**
   * A training pass: dropout is applied, with masks drawn from {@code random} in a fixed order.
   *
   * @param pattern the graph
   * @param attention the attention forward pass
   * @param random the dropout random source (consumed)
   * @return the context
   */
  public static PassContext training(
      AttentionPattern pattern, AttentionForward attention, SplittableRandom random) {
    return new PassContext(pattern, attention, true, Objects.requireNonNull(random, "random"));
  }

  /**
   * An evaluation pass: no dropout, nothing random.
   *
   * @param pattern the graph
   * @param attention the attention forward pass
   * @return the context
   */
  public static PassContext evaluation(AttentionPattern pattern, AttentionForward attention) {
    return new PassContext(pattern, attention, false, null);
  }

  /**
   * Returns the graph.
   *
   * @return the pattern
   */
  public AttentionPattern pattern() {
    return pattern;
  }

  /**
   * Returns the attention forward pass.
   *
   * @return the forward pass
   */
  public AttentionForward attention() {
    return attention;
  }

  /**
   * Returns whether dropout is on.
   *
   * @return true in training passes
   */
  public boolean training() {
    return training;
  }

  /**
   * Draws an inverted-dropout mask (common practice: kept entries scaled by {@code 1/(1 − p)} so
   * the expected value is unchanged), or returns null when no dropout applies (evaluation pass or
   * {@code p == 0}).
   *
   * @param length mask length
   * @param rate drop probability p in {@code [0, 1)}
   * @return the mask with entries 0 or {@code 1/(1 − p)}, or null
   */
  public double[] dropoutMask(int length, double rate) {
    if (!training || rate == 0) {
      return null;
    }
    double keep = 1.0 / (1.0 - rate);
    double[] mask = new double[length];
    for (int i = 0; i < length; i++) {
      mask[i] = random.nextDouble() < rate ? 0.0 : keep;
    }
    return mask;
  }
}
