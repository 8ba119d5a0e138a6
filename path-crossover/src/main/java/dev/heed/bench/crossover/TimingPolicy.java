package dev.heed.bench.crossover;

/**
 * How {@link PointTimer} times one sweep point: warm-up calls until the timings are stable, then a
 * number of timed repetitions, with caps on the time spent.
 *
 * <p>Warm-up stops after at least {@code minWarmupCalls} calls once the last three calls are within
 * {@code stableTolerance} of their median (relative), or when {@code maxWarmupCalls} calls or
 * {@code maxWarmupSeconds} have been spent. Then {@code repetitions} calls are timed, fewer (but at
 * least {@code minRepetitions}) when the last warm-up call suggests they would take longer than
 * {@code maxTimedSeconds}.
 *
 * <p>Thread safety: immutable.
 *
 * @param minWarmupCalls at least 1
 * @param maxWarmupCalls at least {@code minWarmupCalls}
 * @param maxWarmupSeconds positive
 * @param stableTolerance relative spread of the last three warm-up calls that counts as stable,
 *     positive
 * @param repetitions timed calls, at least 1
 * @param minRepetitions at least 1 and at most {@code repetitions}
 * @param maxTimedSeconds positive
 */
public record TimingPolicy(
    int minWarmupCalls,
    int maxWarmupCalls,
    double maxWarmupSeconds,
    double stableTolerance,
    int repetitions,
    int minRepetitions,
    double maxTimedSeconds) {

  /**
   * Validates the policy.
   *
   * @throws IllegalArgumentException if a value is out of range
   */
  public TimingPolicy {
    if (minWarmupCalls < 1
        || maxWarmupCalls < minWarmupCalls
        || !(maxWarmupSeconds > 0)
        || !(stableTolerance > 0)
        || repetitions < 1
        || minRepetitions < 1
        || minRepetitions > repetitions
        || !(maxTimedSeconds > 0)) {
      throw new IllegalArgumentException("timing policy out of range: " + describeValues());
    }
  }

  /**
   * The full sweep's policy: 3 to 30 warm-up calls within 3 s, stable within 5 %, 9 repetitions (at
   * least 3) within 20 s.
   *
   * @return the policy
   */
  public static TimingPolicy full() {
    return new TimingPolicy(3, 30, 3.0, 0.05, 9, 3, 20.0);
  }

  /**
   * The quick sweep's policy: 2 to 10 warm-up calls within 0.3 s, stable within 10 %, 5 repetitions
   * (at least 3) within 1.5 s.
   *
   * @return the policy
   */
  public static TimingPolicy quick() {
    return new TimingPolicy(2, 10, 0.3, 0.10, 5, 3, 1.5);
  }

  private String describeValues() {
    return "minWarmupCalls="
        + minWarmupCalls
        + ", maxWarmupCalls="
        + maxWarmupCalls
        + ", maxWarmupSeconds="
        + maxWarmupSeconds
        + ", stableTolerance="
        + stableTolerance
        + ", repetitions="
        + repetitions
        + ", minRepetitions="
        + minRepetitions
        + ", maxTimedSeconds="
        + maxTimedSeconds;
  }
}
