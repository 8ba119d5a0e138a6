package dev.heed.bench.crossover;

import dev.heed.bench.roofline.Stats;
import java.util.ArrayList;
import java.util.List;
import java.util.function.LongSupplier;

/**
 * Times one call, or the paths of one sweep point interleaved, under a {@link TimingPolicy}:
 * warm-up until stable, then the median of the timed repetitions with min, max, quartiles and a
 * confidence interval, slow outliers dropped and high-spread points timed again. Each call is timed
 * on its own with {@link System#nanoTime()}, which is fine for calls of a few microseconds and
 * more, the range of the sweep (common practice: nanoTime's resolution is well under a microsecond
 * on Linux).
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
    long first = timeOnce(call);
    if (first * 1e-9 > abortAboveSeconds) {
      throw new TooSlowException(first);
    }
    return timeInterleaved(new Runnable[] {call}, new long[] {first}, policy)[0];
  }

  /**
   * Times several calls (the two paths of one sweep point) interleaved: warm-up calls alternate
   * between them until each is stable (or capped), then the timed calls alternate A, B, A, B, so
   * that a burst of other work on the machine touches every call alike. Each call's batch then
   * loses its outliers (above Q3 + 3 IQR); while its spread exceeds {@code policy.maxSpread()}, the
   * call gets a fresh batch, up to {@code policy.extraRounds()} more, and its statistics come from
   * the batch with the least spread (all timed calls are counted in {@code repetitions()}).
   *
   * @param calls the calls (not null, at least one)
   * @param firstNanos each call's first call, already made (it counts as a warm-up call)
   * @param policy warm-up, repetition and spread rules
   * @return one result per call, in order
   * @throws RuntimeException whatever a call throws, unchanged
   */
  public static TimingResult[] timeInterleaved(
      Runnable[] calls, long[] firstNanos, TimingPolicy policy) {
    return timeInterleaved(calls, firstNanos, policy, System::nanoTime);
  }

  /**
   * {@link #timeInterleaved(Runnable[], long[], TimingPolicy)} on a given clock: tests pass one
   * their calls advance, so that the timing rules are checked without timing anything.
   */
  static TimingResult[] timeInterleaved(
      Runnable[] calls, long[] firstNanos, TimingPolicy policy, LongSupplier clock) {
    int k = calls.length;
    List<List<Long>> warm = new ArrayList<>();
    long[] warmTotal = new long[k];
    boolean[] done = new boolean[k];
    boolean[] stable = new boolean[k];
    for (int c = 0; c < k; c++) {
      List<Long> w = new ArrayList<>();
      w.add(firstNanos[c]);
      warm.add(w);
      warmTotal[c] = firstNanos[c];
    }
    int left = k;
    while (left > 0) {
      for (int c = 0; c < k; c++) {
        if (done[c]) {
          continue;
        }
        List<Long> w = warm.get(c);
        if (w.size() >= policy.minWarmupCalls() && lastThreeStable(w, policy.stableTolerance())) {
          stable[c] = true;
          done[c] = true;
        } else if (w.size() >= policy.maxWarmupCalls()
            || warmTotal[c] * 1e-9 >= policy.maxWarmupSeconds()) {
          done[c] = true;
        } else {
          long t = timeOnce(calls[c], clock);
          w.add(t);
          warmTotal[c] += t;
          continue;
        }
        left--;
      }
    }
    int[] reps = new int[k];
    for (int c = 0; c < k; c++) {
      List<Long> w = warm.get(c);
      reps[c] = repetitionsFor(w.get(w.size() - 1), policy);
    }
    // Each batch is judged on its own; a point whose batch spreads too widely gets a fresh batch,
    // and the batch with the least spread is the one reported (interference only slows calls, so
    // the tightest batch is the least disturbed one).
    double[][] kept = new double[k][];
    double[] keptSpread = new double[k];
    int[] discarded = new int[k];
    int[] timed = new int[k];
    int[] extra = new int[k];
    int[] batch = reps.clone();
    for (int round = 0; ; round++) {
      List<List<Double>> samples = new ArrayList<>();
      for (int c = 0; c < k; c++) {
        samples.add(new ArrayList<>());
      }
      timeRounds(calls, batch, samples, clock);
      int[] more = new int[k];
      boolean any = false;
      for (int c = 0; c < k; c++) {
        if (batch[c] == 0) {
          continue;
        }
        double[] all = samples.get(c).stream().mapToDouble(Double::doubleValue).toArray();
        timed[c] += all.length;
        double[] tidy = withoutOutliers(all);
        double spread = spread(tidy);
        if (kept[c] == null || spread < keptSpread[c]) {
          kept[c] = tidy;
          keptSpread[c] = spread;
          discarded[c] = all.length - tidy.length;
        }
        if (keptSpread[c] > policy.maxSpread() && round < policy.extraRounds()) {
          more[c] = reps[c];
          extra[c]++;
          any = true;
        }
      }
      if (!any) {
        break;
      }
      batch = more;
    }
    TimingResult[] results = new TimingResult[k];
    for (int c = 0; c < k; c++) {
      double[] times = kept[c];
      double[] ci = medianInterval(times);
      results[c] =
          new TimingResult(
              quantile(times, 0.5),
              quantile(times, 0),
              quantile(times, 1),
              quantile(times, 0.25),
              quantile(times, 0.75),
              warm.get(c).size(),
              timed[c],
              stable[c],
              ci[0],
              ci[1],
              discarded[c],
              extra[c]);
    }
    return results;
  }

  /** {@code (max - min) / median} of {@code times}. */
  private static double spread(double[] times) {
    return (quantile(times, 1) - quantile(times, 0)) / quantile(times, 0.5);
  }

  private static int repetitionsFor(long lastWarmNanos, TimingPolicy policy) {
    int reps = policy.repetitions();
    double projected = (double) lastWarmNanos * reps * 1e-9;
    if (projected > policy.maxTimedSeconds()) {
      reps =
          Math.max(
              policy.minRepetitions(),
              (int) Math.floor(policy.maxTimedSeconds() / (lastWarmNanos * 1e-9)));
      reps = Math.min(reps, policy.repetitions());
    }
    return reps;
  }

  /** Times {@code reps[c]} calls of each call c, alternating between the calls. */
  private static void timeRounds(
      Runnable[] calls, int[] reps, List<List<Double>> samples, LongSupplier clock) {
    int rounds = 0;
    for (int r : reps) {
      rounds = Math.max(rounds, r);
    }
    for (int r = 0; r < rounds; r++) {
      for (int c = 0; c < calls.length; c++) {
        if (r < reps[c]) {
          samples.get(c).add((double) timeOnce(calls[c], clock));
        }
      }
    }
  }

  /**
   * Drops values above Q3 + 3·IQR (Tukey's far-out fence, common practice). Slow outliers only: a
   * call cannot be sped up by interference.
   */
  static double[] withoutOutliers(double[] values) {
    if (values.length < 4) {
      return values.clone();
    }
    double q1 = quantile(values, 0.25);
    double q3 = quantile(values, 0.75);
    double fence = q3 + 3 * (q3 - q1);
    return java.util.Arrays.stream(values).filter(v -> v <= fence).toArray();
  }

  /**
   * A distribution-free 95 % confidence interval of the median from order statistics: ranks {@code
   * m/2 ± 0.98·√m} (the normal approximation to the binomial, common practice); the whole range for
   * fewer than 6 values.
   */
  static double[] medianInterval(double[] values) {
    double[] sorted = values.clone();
    java.util.Arrays.sort(sorted);
    int m = sorted.length;
    if (m < 6) {
      return new double[] {sorted[0], sorted[m - 1]};
    }
    int lo = (int) Math.floor(m / 2.0 - 0.98 * Math.sqrt(m));
    int hi = (int) Math.ceil(m / 2.0 + 0.98 * Math.sqrt(m));
    return new double[] {sorted[Math.max(0, lo)], sorted[Math.min(m - 1, hi)]};
  }

  private static long timeOnce(Runnable call) {
    return timeOnce(call, System::nanoTime);
  }

  private static long timeOnce(Runnable call, LongSupplier clock) {
    long start = clock.getAsLong();
    call.run();
    return clock.getAsLong() - start;
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
