package dev.heed.bench.live;

import java.util.Arrays;
import java.util.Locale;

/** One line describing a distribution of per-call figures (nearest-rank percentiles). */
final class Percentiles {

  private Percentiles() {}

  /** Returns "p50 …, p90 …, p99 …, p99.9 …, max …, mean …" of {@code values} (not modified). */
  static String describe(long[] values) {
    if (values.length == 0) {
      return "(none)";
    }
    long[] sorted = values.clone();
    Arrays.sort(sorted);
    double mean = Arrays.stream(sorted).average().orElse(0);
    return String.format(
        Locale.ROOT,
        "p50 %,d, p90 %,d, p99 %,d, p99.9 %,d, max %,d, mean %,.1f",
        at(sorted, 0.50),
        at(sorted, 0.90),
        at(sorted, 0.99),
        at(sorted, 0.999),
        sorted[sorted.length - 1],
        mean);
  }

  private static long at(long[] sorted, double q) {
    return sorted[(int) (q * (sorted.length - 1))];
  }
}
