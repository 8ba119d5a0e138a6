package dev.heed.attention;

import java.util.Locale;

/**
 * The time the path cost model ({@link PathCosts}) predicts for one attention call on each path,
 * and the path it would choose: the one predicted faster, or {@link ComputePath#SPARSE} on a tie.
 *
 * <p>Thread safety: immutable.
 *
 * @param denseSeconds predicted seconds on the dense path, at least 0
 * @param sparseSeconds predicted seconds on the sparse path, at least 0
 */
public record PathEstimate(double denseSeconds, double sparseSeconds) {

  /**
   * Checks the values.
   *
   * @throws IllegalArgumentException if a time is negative or not finite
   */
  public PathEstimate {
    if (!(denseSeconds >= 0 && denseSeconds < Double.POSITIVE_INFINITY)
        || !(sparseSeconds >= 0 && sparseSeconds < Double.POSITIVE_INFINITY)) {
      throw new IllegalArgumentException(
          "predicted times must be finite and at least 0, got dense "
              + denseSeconds
              + " s, sparse "
              + sparseSeconds
              + " s");
    }
  }

  /**
   * Returns the path predicted faster (sparse on a tie: it needs no native library and no n²
   * scratch).
   *
   * @return the path
   */
  public ComputePath faster() {
    return denseSeconds < sparseSeconds ? ComputePath.DENSE : ComputePath.SPARSE;
  }

  /**
   * Returns the predicted seconds on one path.
   *
   * @param path the path
   * @return seconds
   */
  public double seconds(ComputePath path) {
    return path == ComputePath.DENSE ? denseSeconds : sparseSeconds;
  }

  /**
   * Returns the sum of this estimate and another (the calls of one layer).
   *
   * @param other another estimate
   * @return the sum
   */
  public PathEstimate plus(PathEstimate other) {
    return new PathEstimate(denseSeconds + other.denseSeconds, sparseSeconds + other.sparseSeconds);
  }

  /**
   * Returns a short description, for example {@code "predicted dense 4.1 ms, sparse 12 ms"}.
   *
   * @return the description
   */
  @Override
  public String toString() {
    return "predicted dense " + millis(denseSeconds) + ", sparse " + millis(sparseSeconds);
  }

  private static String millis(double seconds) {
    double ms = seconds * 1e3;
    return String.format(Locale.ROOT, ms >= 10 ? "%.0f ms" : ms >= 1 ? "%.1f ms" : "%.2f ms", ms);
  }
}
