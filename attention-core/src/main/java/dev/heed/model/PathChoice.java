package dev.heed.model;

import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.PathCosts;
import dev.heed.attention.PathEstimate;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import java.util.Objects;

/**
 * Which attention kernel a model call uses, per attention layer.
 *
 * <p>{@link #AUTO} asks the path cost model ({@link PathCosts}) for each attention call of each
 * layer: it predicts the call's time on both paths from n, the pattern's entries, the score
 * function, heads, widths and threads, and AUTO takes the path predicted faster (sparse on a tie).
 * The model's coefficients come from the profile the model was given ({@link
 * AttentionModel#withPathCosts}), else {@link PathCosts#current()}: one calibrated on this machine
 * with {@code heed calibrate}, or the reference machine's. The choice and both predicted times are
 * in {@link LayerRun#estimate()} and logged at debug level. Until the dense path's back end (ND4J)
 * has started in the JVM, a model's AUTO also charges the dense path its start-up, about 1.5 s
 * once: it takes the dense path only for a call predicted to save more than that, so small calls (a
 * few nodes' receptive fields) never start ND4J for microseconds; once something has started it (a
 * large call, an explicit {@link #DENSE}, a wide projection), AUTO compares the calls alone. If the
 * kernel AUTO picked is not on the class path, AUTO uses the other one and logs a warning; an
 * explicit {@link #DENSE} or {@link #SPARSE} fails instead.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum PathChoice {
  /** Always the dense (ND4J) kernel. */
  DENSE,
  /** Always the sparse (CSR) kernel; needs {@code dev.heed:attention-sparse}. */
  SPARSE,
  /** The path the cost model predicts faster, per layer and call (see the class comment). */
  AUTO;

  /**
   * Returns the path this choice takes for one attention call (for AUTO, the cost model's faster
   * path, before the dense start-up charge and any fallback).
   *
   * @param pattern the pattern the layer attends over
   * @param score the layer's score function
   * @param shape the layer's heads and widths
   * @param threads the kernels' threads ({@code KernelOptions.threads()}), at least 1
   * @param costs the cost profile AUTO predicts with; may be null for DENSE and SPARSE
   * @return the path
   * @throws NullPointerException if pattern, score or shape is null, or costs is null for AUTO
   */
  public ComputePath pathFor(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      int threads,
      PathCosts costs) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(score, "score");
    Objects.requireNonNull(shape, "shape");
    return switch (this) {
      case DENSE -> ComputePath.DENSE;
      case SPARSE -> ComputePath.SPARSE;
      case AUTO ->
          Objects.requireNonNull(costs, "costs").estimate(pattern, score, shape, threads).faster();
    };
  }

  /**
   * AUTO's path for a call with this prediction when starting the dense path would cost {@code
   * denseStartUpSeconds} more: the faster path, except the sparse one where the dense path is
   * predicted to save no more than its start-up (ties go sparse, as in {@link
   * PathEstimate#faster()}).
   */
  static ComputePath autoPath(PathEstimate estimate, double denseStartUpSeconds) {
    ComputePath faster = estimate.faster();
    if (faster == ComputePath.DENSE
        && estimate.sparseSeconds() - estimate.denseSeconds() <= denseStartUpSeconds) {
      return ComputePath.SPARSE;
    }
    return faster;
  }
}
