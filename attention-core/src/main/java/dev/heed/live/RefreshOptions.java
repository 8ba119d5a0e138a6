package dev.heed.live;

import dev.heed.model.PathChoice;
import java.util.Objects;

/**
 * How an {@link IncrementalScorer} refreshes: the attention path its layers run on and the work
 * budget of one {@link IncrementalScorer#refresh()} call.
 *
 * <pre>{@code
 * RefreshOptions options =
 *     RefreshOptions.defaults().withPath(PathChoice.SPARSE).withWorkBudget(200_000);
 * }</pre>
 *
 * <p>Thread safety: immutable.
 */
public final class RefreshOptions {

  /** The default work budget: none (every refresh finishes what is pending). */
  public static final long UNLIMITED = Long.MAX_VALUE;

  private static final RefreshOptions DEFAULTS = new RefreshOptions(PathChoice.AUTO, UNLIMITED);

  private final PathChoice path;
  private final long workBudget;

  private RefreshOptions(PathChoice path, long workBudget) {
    this.path = path;
    this.workBudget = workBudget;
  }

  /**
   * Returns the defaults: {@link PathChoice#AUTO} and an {@link #UNLIMITED} budget.
   *
   * @return the defaults
   */
  public static RefreshOptions defaults() {
    return DEFAULTS;
  }

  /**
   * Returns these options with another attention path. The dense path masks each local pattern
   * (cost quadratic in the rows a refresh reads), so live graphs normally use {@link
   * PathChoice#SPARSE} or {@link PathChoice#AUTO}.
   *
   * @param path the path
   * @return new options
   */
  public RefreshOptions withPath(PathChoice path) {
    return new RefreshOptions(Objects.requireNonNull(path, "path"), workBudget);
  }

  /**
   * Returns these options with a work budget per refresh: the attention entries read by the rows
   * recomputed, plus one per row, over all stages. A refresh stops starting new rows once it has
   * spent the budget and leaves the rest pending for the next call; it always finishes at least one
   * row, so a hub whose row alone exceeds the budget still makes progress: a call overruns the
   * budget by at most its last row's work.
   *
   * @param entries at least 1, or {@link #UNLIMITED}
   * @return new options
   * @throws IllegalArgumentException if {@code entries} is below 1
   */
  public RefreshOptions withWorkBudget(long entries) {
    if (entries < 1) {
      throw new IllegalArgumentException(
          "the work budget must be at least 1 entry (or RefreshOptions.UNLIMITED), got " + entries);
    }
    return new RefreshOptions(path, entries);
  }

  /**
   * Returns the attention path.
   *
   * @return the path
   */
  public PathChoice path() {
    return path;
  }

  /**
   * Returns the work budget per refresh.
   *
   * @return entries, or {@link #UNLIMITED}
   */
  public long workBudget() {
    return workBudget;
  }

  @Override
  public String toString() {
    return "RefreshOptions[path="
        + path
        + ", workBudget="
        + (workBudget == UNLIMITED ? "unlimited" : Long.toString(workBudget))
        + "]";
  }
}
