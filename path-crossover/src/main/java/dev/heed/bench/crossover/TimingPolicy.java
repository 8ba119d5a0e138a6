package dev.heed.bench.crossover;

/**
 * How {@link PointTimer} times one sweep point: warm-up calls until the timings are stable, then a
 * number of timed repetitions, with caps on the time spent.
 *
 * <p>Warm-up stops after at least {@code minWarmupCalls} calls once the last three calls are within
 * {@code stableTolerance} of their median (relative), or when {@code maxWarmupCalls} calls or
 * {@code maxWarmupSeconds} have been spent. Then {@code repetitions} calls are timed, fewer (but at
 * least {@code minRepetitions}) when the last warm-up call suggests they would take longer than
 * {@code maxTimedSeconds}. Timed calls more than 3 interquartile ranges above the third quartile
 * are dropped (Tukey's far-out fence, common practice: a call that a garbage collection, a JIT
 * compilation or another process interrupted). If the kept calls still spread by more than {@code
 * maxSpread} of their median, a fresh batch of repetitions is timed, up to {@code extraRounds}
 * times, and the batch with the least spread is reported.
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
 * @param maxSpread relative spread {@code (max − min) / median} above which a point is timed again,
 *     positive
 * @param extraRounds how many more batches a point with a high spread may get, at least 0
 */
public record TimingPolicy(
    int minWarmupCalls,
    int maxWarmupCalls,
    double maxWarmupSeconds,
    double stableTolerance,
    int repetitions,
    int minRepetitions,
    double maxTimedSeconds,
    double maxSpread,
    int extraRounds) {

  /** Default {@code maxSpread}: {@value}. */
  public static final double DEFAULT_MAX_SPREAD = 0.25;

  /** Default {@code extraRounds}: {@value}. */
  public static final int DEFAULT_EXTRA_ROUNDS = 2;

  /**
   * A policy with the default {@code maxSpread} and {@code extraRounds}.
   *
   * @param minWarmupCalls at least 1
   * @param maxWarmupCalls at least {@code minWarmupCalls}
   * @param maxWarmupSeconds positive
   * @param stableTolerance positive
   * @param repetitions at least 1
   * @param minRepetitions at least 1 and at most {@code repetitions}
   * @param maxTimedSeconds positive
   */
  public TimingPolicy(
      int minWarmupCalls,
      int maxWarmupCalls,
      double maxWarmupSeconds,
      double stableTolerance,
      int repetitions,
      int minRepetitions,
      double maxTimedSeconds) {
    this(
        minWarmupCalls,
        maxWarmupCalls,
        maxWarmupSeconds,
        stableTolerance,
        repetitions,
        minRepetitions,
        maxTimedSeconds,
        DEFAULT_MAX_SPREAD,
        DEFAULT_EXTRA_ROUNDS);
  }

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
        || !(maxTimedSeconds > 0)
        || !(maxSpread > 0)
        || extraRounds < 0) {
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
   * The quick sweep's policy: 3 to 12 warm-up calls within 1 s, stable within 10 %, 5 repetitions
   * (at least 3) within 1.5 s. (A warm-up cap of 0.3 s let timed calls run while the JIT was still
   * recompiling a kernel for a pattern kind it had not seen: 326 ms for a 3 ms call.)
   *
   * @return the policy
   */
  public static TimingPolicy quick() {
    return new TimingPolicy(3, 12, 1.0, 0.10, 5, 3, 1.5);
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
        + maxTimedSeconds
        + ", maxSpread="
        + maxSpread
        + ", extraRounds="
        + extraRounds;
  }
}
