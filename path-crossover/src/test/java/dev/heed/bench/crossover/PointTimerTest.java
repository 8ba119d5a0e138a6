package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicLong;
import org.junit.jupiter.api.Test;

/** The timer's bookkeeping (call counts, order of the statistics); no speed is asserted. */
class PointTimerTest {

  private static final TimingPolicy POLICY = new TimingPolicy(2, 6, 1.0, 0.5, 5, 2, 1.0);

  @Test
  void everyCallIsCountedAndTheStatisticsAreOrdered() {
    AtomicInteger calls = new AtomicInteger();
    double[] sink = new double[1];
    TimingResult r =
        PointTimer.time(
            () -> {
              calls.incrementAndGet();
              for (int i = 0; i < 1000; i++) {
                sink[0] += Math.sqrt(i);
              }
            },
            POLICY);
    assertEquals(r.warmupCalls() + r.repetitions(), calls.get());
    assertTrue(r.warmupCalls() >= POLICY.minWarmupCalls() || !r.stable(), r.toString());
    assertTrue(r.warmupCalls() <= POLICY.maxWarmupCalls(), r.toString());
    assertTrue(r.repetitions() >= POLICY.minRepetitions(), r.toString());
    assertTrue(r.repetitions() <= POLICY.repetitions(), r.toString());
    assertTrue(r.minNanos() <= r.q1Nanos() && r.q1Nanos() <= r.medianNanos(), r.toString());
    assertTrue(r.medianNanos() <= r.q3Nanos() && r.q3Nanos() <= r.maxNanos(), r.toString());
    assertTrue(sink[0] > 0);
  }

  @Test
  void aFirstCallOverTheLimitStopsAfterOneCall() {
    AtomicInteger calls = new AtomicInteger();
    // any call takes longer than -1 s, so the timer must give up after exactly one call
    PointTimer.TooSlowException e =
        assertThrows(
            PointTimer.TooSlowException.class,
            () -> PointTimer.time(calls::incrementAndGet, POLICY, -1.0));
    assertEquals(1, calls.get());
    assertTrue(e.firstCallNanos() >= 0);
  }

  @Test
  void interleavedCallsAlternateAndEachGetsItsOwnResult() {
    StringBuilder order = new StringBuilder();
    Runnable a = () -> order.append('a');
    Runnable b = () -> order.append('b');
    TimingPolicy policy = new TimingPolicy(1, 1, 1.0, 0.5, 4, 1, 1.0, 1e9, 0);
    TimingResult[] r = PointTimer.timeInterleaved(new Runnable[] {a, b}, new long[] {1, 1}, policy);
    assertEquals(2, r.length);
    // no warm-up call beyond the first (already made), then four timed rounds, a before b
    assertEquals("abababab", order.toString());
    assertEquals(4, r[0].repetitions());
    assertEquals(4, r[1].repetitions());
  }

  @Test
  void aWidelySpreadBatchIsTimedAgainAndTheTightestBatchIsReported() {
    // the first batch alternates 1 ms and 5 ms calls (spread 400 %), every later call takes 1 ms,
    // on a clock the calls advance (a busy wait on a loaded machine measured the machine instead)
    AtomicInteger calls = new AtomicInteger();
    AtomicLong clock = new AtomicLong();
    Runnable call =
        () -> {
          int i = calls.getAndIncrement();
          clock.addAndGet(i < 4 && i % 2 == 1 ? 5_000_000L : 1_000_000L);
        };
    TimingPolicy policy = new TimingPolicy(1, 1, 1.0, 0.5, 4, 1, 1.0, 0.25, 2);
    TimingResult r =
        PointTimer.timeInterleaved(new Runnable[] {call}, new long[] {1}, policy, clock::get)[0];
    assertEquals(1, r.extraRounds(), r.toString());
    assertEquals(4 * (1 + r.extraRounds()), r.repetitions(), "every timed call is counted");
    assertEquals(r.repetitions(), calls.get());
    // pooled, the median of {1, 5, 1, 5, 1, 1, 1, 1} ms would still carry the slow calls' spread;
    // the reported batch is a tight one of 1 ms calls
    assertEquals(1e6, r.medianNanos(), r.toString());
    assertEquals(1e6, r.maxNanos(), r.toString());
  }

  @Test
  void slowOutliersAreDroppedAndTheMedianHasAnInterval() {
    double[] v = {10, 11, 9, 10, 12, 10, 11, 200};
    double[] kept = PointTimer.withoutOutliers(v);
    assertEquals(7, kept.length, "200 is above Q3 + 3 IQR");
    double[] fast = {1, 10, 11, 9, 10, 12, 10, 11};
    assertEquals(8, PointTimer.withoutOutliers(fast).length, "fast values are never dropped");
    double[] ci = PointTimer.medianInterval(new double[] {5, 1, 4, 2, 3, 6, 7, 8, 9});
    assertTrue(ci[0] <= 5 && 5 <= ci[1], ci[0] + ".." + ci[1]);
    assertTrue(ci[0] >= 1 && ci[1] <= 9);
  }

  @Test
  void quantilesInterpolateBetweenOrderStatistics() {
    double[] v = {4, 1, 3, 2};
    assertEquals(1, PointTimer.quantile(v, 0));
    assertEquals(2.5, PointTimer.quantile(v, 0.5));
    assertEquals(4, PointTimer.quantile(v, 1));
    assertEquals(1.75, PointTimer.quantile(v, 0.25));
    assertEquals(4, v[0], "input not modified");
    assertTrue(Double.isNaN(PointTimer.quantile(new double[0], 0.5)));
  }
}
