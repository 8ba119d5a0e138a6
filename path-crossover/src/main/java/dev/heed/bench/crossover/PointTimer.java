package dev.heed.bench.crossover;

import dev.heed.bench.roofline.Stats;
import java.util.ArrayList;
import java.util.List;

/**
 * Times one call repeatedly under a {@link TimingPolicy}: warm-up until stable, then the median of
 * the timed repetitions with min, max and quartiles. Each call is timed on its own with {@link
 * System#nanoTime()}, which is fine for calls of a few microseconds and more, the range of the
 * sweep (common practice: nanoTime's resolution is well under a microsecond on Linux).
 *
 * <p>Thread safety: stateless.
 */
public final class PointTimer {

  private PointTimer() {}

  /**
   * Times {@code call}.
   *
   * @param call the work to time; its results must be kept by the caller (written to an array the
   *     caller reads afterwards) so that nothing is optimised away
   * @param policy warm-up and repetition rules
   * @return the timings
   * @throws RuntimeException whatever {@code call} throws, unchanged
   */
  public static TimingResult time(Runnable call, TimingPolicy policy) {
    return time(call, policy, Double.POSITIVE_INFINITY);
  }

  /**
   * Times {@code call}, giving up after the first call if that one call took longer than {@code
   * abortAboveSeconds}.
   *
   * @param call the work to time; see {@link #time(Runnable, TimingPolicy)}
   * @param policy warm-up and repetition rules
   * @param abortAboveSeconds the longest first call worth continuing after
   * @return the timings
   * @throws TooSlowException if the first call took longer than {@code abortAboveSeconds}
   * @throws RuntimeException whatever {@code call} throws, unchanged
   */
  public static TimingResult time(Runnable call, TimingPolicy policy, double abortAboveSeconds) {
    List<Long> warm = new ArrayList<>();
    long warmTotal = 0;
    boolean stable = false;
    while (true) {
      long t = timeOnce(call);
      if (warm.isEmpty() && t * 1e-9 > abortAboveSeconds) {
        throw new TooSlowException(t);
      }
      warm.add(t);
      warmTotal += t;
      if (warm.size() >= policy.minWarmupCalls()
          && lastThreeStable(warm, policy.stableTolerance())) {
        stable = true;
        break;
      }
      if (warm.size() >= policy.maxWarmupCalls() || warmTotal * 1e-9 >= policy.maxWarmupSeconds()) {
        break;
      }
    }
    long last = warm.get(warm.size() - 1);
    int reps = policy.repetitions();
    double projected = (double) last * reps * 1e-9;
    if (projected > policy.maxTimedSeconds()) {
      reps =
          Math.max(
              policy.minRepetitions(), (int) Math.floor(policy.maxTimedSeconds() / (last * 1e-9)));
      reps = Math.min(reps, policy.repetitions());
    }
    double[] times = new double[reps];
    for (int r = 0; r < reps; r++) {
      times[r] = timeOnce(call);
    }
    return new TimingResult(
        quantile(times, 0.5),
        quantile(times, 0),
        quantile(times, 1),
        quantile(times, 0.25),
        quantile(times, 0.75),
        warm.size(),
        reps,
        stable);
  }

  private static long timeOnce(Runnable call) {
    long start = System.nanoTime();
    call.run();
    return System.nanoTime() - start;
  }

  private static boolean lastThreeStable(List<Long> times, double tolerance) {
    int size = times.size();
    if (size < 3) {
      return false;
    }
    double[] last = {times.get(size - 1), times.get(size - 2), times.get(size - 3)};
    double median = quantile(last, 0.5);
    double spread = quantile(last, 1) - quantile(last, 0);
    return median > 0 && spread / median <= tolerance;
  }

  /**
   * Returns the {@code q}-quantile of {@code values} (not modified), interpolating linearly between
   * order statistics; NaN for an empty array.
   *
   * @param values the sample
   * @param q in {@code [0, 1]}
   * @return the quantile
   */
  static double quantile(double[] values, double q) {
    return Stats.quantile(values, q);
  }

  /** Thrown when the first call alone took longer than the caller's limit. */
  public static final class TooSlowException extends RuntimeException {
    private static final long serialVersionUID = 1L;

    private final long firstCallNanos;

    TooSlowException(long firstCallNanos) {
      super("first call took " + firstCallNanos / 1e9 + " s");
      this.firstCallNanos = firstCallNanos;
    }

    /**
     * Returns how long the first call took.
     *
     * @return nanoseconds
     */
    public long firstCallNanos() {
      return firstCallNanos;
    }
  }
}
