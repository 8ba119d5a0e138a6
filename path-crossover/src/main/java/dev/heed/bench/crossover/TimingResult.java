package dev.heed.bench.crossover;

/**
 * The timings of one sweep point, in nanoseconds per call. The statistics describe the reported
 * batch of timed calls (the one with the least spread when a point was timed again); {@code
 * repetitions} counts every timed call.
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
 * @param ciLowNanos lower end of a 95 % confidence interval of the median (order statistics)
 * @param ciHighNanos upper end of that interval
 * @param discarded calls of the reported batch dropped as outliers (above Q3 + 3 IQR)
 * @param extraRounds extra batches of repetitions timed because the spread was high
 */
public record TimingResult(
    double medianNanos,
    double minNanos,
    double maxNanos,
    double q1Nanos,
    double q3Nanos,
    int warmupCalls,
    int repetitions,
    boolean stable,
    double ciLowNanos,
    double ciHighNanos,
    int discarded,
    int extraRounds) {

  /**
   * A result without a confidence interval (taken as min..max), outliers or extra rounds.
   *
   * @param medianNanos median
   * @param minNanos fastest
   * @param maxNanos slowest
   * @param q1Nanos first quartile
   * @param q3Nanos third quartile
   * @param warmupCalls warm-up calls
   * @param repetitions timed calls
   * @param stable whether warm-up settled
   */
  public TimingResult(
      double medianNanos,
      double minNanos,
      double maxNanos,
      double q1Nanos,
      double q3Nanos,
      int warmupCalls,
      int repetitions,
      boolean stable) {
    this(
        medianNanos,
        minNanos,
        maxNanos,
        q1Nanos,
        q3Nanos,
        warmupCalls,
        repetitions,
        stable,
        minNanos,
        maxNanos,
        0,
        0);
  }

  /**
   * Returns the half-width of the median's confidence interval relative to the median.
   *
   * @return {@code (ciHigh − ciLow) / 2 / median}
   */
  public double relativeConfidence() {
    return (ciHighNanos - ciLowNanos) / 2 / medianNanos;
  }

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
