package dev.heed.bench.crossover;

/**
 * The timings of one sweep point, in nanoseconds per call.
 *
 * <p>Thread safety: immutable.
 *
 * @param medianNanos median of the timed calls
 * @param minNanos fastest timed call
 * @param maxNanos slowest timed call
 * @param q1Nanos first quartile
 * @param q3Nanos third quartile
 * @param warmupCalls untimed warm-up calls made
 * @param repetitions timed calls made
 * @param stable whether warm-up ended because the timings had settled (not on a cap)
 */
public record TimingResult(
    double medianNanos,
    double minNanos,
    double maxNanos,
    double q1Nanos,
    double q3Nanos,
    int warmupCalls,
    int repetitions,
    boolean stable) {

  /**
   * Returns the median in milliseconds.
   *
   * @return milliseconds per call
   */
  public double medianMillis() {
    return medianNanos / 1e6;
  }

  /**
   * Returns the relative spread {@code (max − min) / median}.
   *
   * @return the spread as a fraction of the median
   */
  public double relativeSpread() {
    return (maxNanos - minNanos) / medianNanos;
  }
}
