package dev.heed.bench.roofline;

import java.util.Collections;
import java.util.Map;
import java.util.Objects;
import java.util.TreeMap;
import java.util.function.Consumer;

/**
 * The measured limits against which the crossover sweep states each kernel's speed: a GEMM rate for
 * the dense path and a gather rate per table size for the sparse path (Williams et al., "Roofline",
 * CACM 2009).
 *
 * <p>Thread safety: immutable.
 *
 * @param gemm the GEMM measurement
 * @param gatherByTableRows gather measurements keyed by table rows; copied, unmodifiable
 */
public record MachineLimits(
    GemmProbe.Measurement gemm, Map<Integer, GatherProbe.Measurement> gatherByTableRows) {

  /**
   * Validates and copies.
   *
   * @throws IllegalArgumentException if there is no gather measurement
   * @throws NullPointerException if an argument is null
   */
  public MachineLimits {
    Objects.requireNonNull(gemm, "gemm");
    Objects.requireNonNull(gatherByTableRows, "gatherByTableRows");
    if (gatherByTableRows.isEmpty()) {
      throw new IllegalArgumentException("at least one gather measurement is needed");
    }
    gatherByTableRows = Collections.unmodifiableMap(new TreeMap<>(gatherByTableRows));
  }

  /**
   * Measures the limits: one GEMM measurement (square float32 matrices, the best case the BLAS
   * reaches, not the skinnier products the dense kernel may run) and one gather measurement per
   * table size.
   *
   * @param tableRows the table sizes (node counts n) to measure the gather rate at
   * @param width the gathered row width (heads · valueDim)
   * @param threads threads for the gather loop (the sparse kernel's thread count)
   * @param quick fewer and shorter trials: GEMM at 1024 (3 trials) instead of 2048 (5 trials), 2 M
   *     instead of 8 M gathered rows per trial, 3 instead of 7 trials
   * @param log receives one line per measurement, for progress output
   * @return the limits
   */
  public static MachineLimits measure(
      int[] tableRows, int width, int threads, boolean quick, Consumer<String> log) {
    int gemmSize = quick ? 1024 : 2048;
    GemmProbe.Measurement gemm = GemmProbe.measure(gemmSize, quick ? 3 : 5, 0x5eedL);
    log.accept(
        String.format(
            "limit: GEMM %dx%d float32 (Nd4j.gemm, %d BLAS threads): %.1f GFLOP/s [%.1f-%.1f]",
            gemm.size(),
            gemm.size(),
            gemm.blasThreads(),
            gemm.gflops(),
            gemm.minGflops(),
            gemm.maxGflops()));
    Map<Integer, GatherProbe.Measurement> gathers = new TreeMap<>();
    for (int rows : tableRows) {
      if (gathers.containsKey(rows)) {
        continue;
      }
      GatherProbe.Measurement g =
          GatherProbe.measure(
              rows, width, threads, quick ? 2_000_000L : 8_000_000L, quick ? 3 : 7, 0x6a7eL + rows);
      gathers.put(rows, g);
      log.accept(
          String.format(
              "limit: gather %d-float rows from a %d-row table (%s, %d threads): %.1f M rows/s"
                  + " [%.1f-%.1f], %.1f GB/s",
              width,
              rows,
              g.loop(),
              threads,
              g.rowsPerSecond() / 1e6,
              g.minRowsPerSecond() / 1e6,
              g.maxRowsPerSecond() / 1e6,
              g.bytesPerSecond() / 1e9));
    }
    return new MachineLimits(gemm, gathers);
  }

  /**
   * Returns limits given as numbers rather than measured, for tests and for reusing figures from an
   * earlier run.
   *
   * @param gemmGflops the GEMM rate, GFLOP/s, positive
   * @param gatherRowsPerSecond the gather rate, rows/s, positive, used for every table size
   * @return the limits
   */
  public static MachineLimits assumed(double gemmGflops, double gatherRowsPerSecond) {
    if (!(gemmGflops > 0) || !(gatherRowsPerSecond > 0)) {
      throw new IllegalArgumentException(
          "assumed limits must be positive, got GEMM "
              + gemmGflops
              + " GFLOP/s and gather "
              + gatherRowsPerSecond
              + " rows/s");
    }
    return new MachineLimits(
        new GemmProbe.Measurement(0, gemmGflops, gemmGflops, gemmGflops, 0),
        Map.of(
            0,
            new GatherProbe.Measurement(
                0,
                0,
                0,
                gatherRowsPerSecond,
                gatherRowsPerSecond,
                gatherRowsPerSecond,
                "assumed")));
  }

  /**
   * Returns the GEMM rate in flops per second.
   *
   * @return flops per second
   */
  public double gemmFlopsPerSecond() {
    return gemm.gflops() * 1e9;
  }

  /**
   * Returns the gather rate measured at the table size closest to {@code tableRows} (on a log
   * scale).
   *
   * @param tableRows the table size (node count n)
   * @return rows per second
   */
  public double gatherRowsPerSecond(int tableRows) {
    GatherProbe.Measurement best = null;
    double bestDistance = Double.POSITIVE_INFINITY;
    for (Map.Entry<Integer, GatherProbe.Measurement> e : gatherByTableRows.entrySet()) {
      double distance =
          Math.abs(Math.log(Math.max(1, e.getKey())) - Math.log(Math.max(1, tableRows)));
      if (distance < bestDistance) {
        bestDistance = distance;
        best = e.getValue();
      }
    }
    assert best != null;
    return best.rowsPerSecond();
  }
}
