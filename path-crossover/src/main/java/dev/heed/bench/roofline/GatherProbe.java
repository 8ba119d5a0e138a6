package dev.heed.bench.roofline;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.ExecutionException;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.ThreadFactory;

/**
 * Measures the random-row gather rate, in rows per second, for a table of a given size: the limit
 * that bounds sparse attention's aggregation, which gathers one source value row per CSR entry.
 *
 * <p>What it measures: a table of {@code tableRows × width} floats; {@code tableRows} output rows,
 * each the sum of {@link #ROWS_PER_TARGET} rows picked uniformly at random (seeded); the pass is
 * repeated until about the requested number of rows has been gathered, split over {@code threads}
 * threads by output rows. Each trial is timed with {@link System#nanoTime()}; two untimed trials
 * come first, and the result is the median (with min and max) of the timed trials. The loop is the
 * Vector API one when {@code jdk.incubator.vector} is readable, otherwise a scalar loop (which C2
 * does not vectorise, so the figure is then low; {@link Measurement#loop()} says which ran).
 *
 * <p>Thread safety: stateless; each call uses its own threads and arrays.
 */
public final class GatherProbe {

  /**
   * Rows summed into each output row (K), as in the C probe {@code
   * benchmarks/probe/random-gather.c}: {@value}.
   */
  public static final int ROWS_PER_TARGET = 16;

  private static final String VECTOR_LOOP = "dev.heed.bench.roofline.vector.VectorGatherLoop";

  private GatherProbe() {}

  /**
   * One gather-rate measurement.
   *
   * @param tableRows rows in the table
   * @param width floats per row
   * @param threads threads used
   * @param rowsPerSecond median gathered rows per second
   * @param minRowsPerSecond slowest trial
   * @param maxRowsPerSecond fastest trial
   * @param loop which loop ran ({@link GatherLoop#describe()})
   */
  public record Measurement(
      int tableRows,
      int width,
      int threads,
      double rowsPerSecond,
      double minRowsPerSecond,
      double maxRowsPerSecond,
      String loop) {

    /**
     * Returns the useful bandwidth, gathered bytes per second ({@code rowsPerSecond · width · 4}).
     *
     * @return bytes per second
     */
    public double bytesPerSecond() {
      return rowsPerSecond * width * Float.BYTES;
    }
  }

  /**
   * Returns whether the Vector API module is readable in this JVM.
   *
   * @return true if {@code jdk.incubator.vector} is in the boot layer
   */
  public static boolean vectorApiAvailable() {
    return ModuleLayer.boot().findModule("jdk.incubator.vector").isPresent();
  }

  /**
   * Returns the fastest available gather loop: the Vector API one when its module is readable, the
   * scalar one otherwise.
   *
   * @return a stateless loop
   */
  public static GatherLoop bestLoop() {
    if (vectorApiAvailable()) {
      try {
        return (GatherLoop) Class.forName(VECTOR_LOOP).getDeclaredConstructor().newInstance();
      } catch (ReflectiveOperationException | LinkageError e) {
        return new ScalarGatherLoop();
      }
    }
    return new ScalarGatherLoop();
  }

  /**
   * Measures the gather rate with {@link #bestLoop()}.
   *
   * @param tableRows rows in the table (the node count n of the matching sparse call), at least 1
   * @param width floats per row (the value row width heads · valueDim), at least 1
   * @param threads threads, at least 1
   * @param rowsPerTrial about how many rows each timed trial gathers, at least 1
   * @param trials timed trials, at least 1
   * @param seed seed for the random row indices
   * @return the measurement
   * @throws IllegalArgumentException if an argument is out of range or the table exceeds one array
   */
  public static Measurement measure(
      int tableRows, int width, int threads, long rowsPerTrial, int trials, long seed) {
    return measure(bestLoop(), tableRows, width, threads, rowsPerTrial, trials, seed);
  }

  /**
   * Measures the gather rate with a given loop.
   *
   * @param loop the loop to time
   * @param tableRows rows in the table, at least 1
   * @param width floats per row, at least 1
   * @param threads threads, at least 1
   * @param rowsPerTrial about how many rows each timed trial gathers, at least 1
   * @param trials timed trials, at least 1
   * @param seed seed for the random row indices
   * @return the measurement
   * @throws IllegalArgumentException if an argument is out of range or the table exceeds one array
   */
  public static Measurement measure(
      GatherLoop loop,
      int tableRows,
      int width,
      int threads,
      long rowsPerTrial,
      int trials,
      long seed) {
    if (tableRows < 1 || width < 1 || threads < 1 || rowsPerTrial < 1 || trials < 1) {
      throw new IllegalArgumentException(
          "tableRows, width, threads, rowsPerTrial and trials must all be at least 1, got "
              + tableRows
              + ", "
              + width
              + ", "
              + threads
              + ", "
              + rowsPerTrial
              + ", "
              + trials);
    }
    long tableLength = (long) tableRows * width;
    long indexLength = (long) tableRows * ROWS_PER_TARGET;
    if (tableLength > Integer.MAX_VALUE - 8 || indexLength > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "table of " + tableRows + " rows x " + width + " floats does not fit one Java array");
    }
    float[] table = new float[(int) tableLength];
    for (int i = 0; i < table.length; i++) {
      table[i] = (i & 1023) * 1e-3f;
    }
    SplittableRandom random = new SplittableRandom(seed);
    int[] indices = new int[(int) indexLength];
    for (int i = 0; i < indices.length; i++) {
      indices[i] = random.nextInt(tableRows);
    }
    float[] out = new float[(int) tableLength];
    long rowsPerPass = indexLength;
    long passes = Math.max(1, (rowsPerTrial + rowsPerPass - 1) / rowsPerPass);

    ExecutorService pool = threads > 1 ? Executors.newFixedThreadPool(threads, daemon()) : null;
    try {
      double[] rates = new double[trials];
      double sink = 0;
      for (int t = -2; t < trials; t++) {
        long start = System.nanoTime();
        for (long p = 0; p < passes; p++) {
          runPass(pool, threads, loop, table, width, indices, out, tableRows);
        }
        long nanos = System.nanoTime() - start;
        sink += out[(tableRows / 2) * width];
        if (t >= 0) {
          rates[t] = passes * (double) rowsPerPass / (nanos * 1e-9);
        }
      }
      if (Double.isNaN(sink)) {
        throw new AssertionError("gather produced NaN from finite data");
      }
      return new Measurement(
          tableRows,
          width,
          threads,
          Stats.median(rates),
          Stats.quantile(rates, 0),
          Stats.quantile(rates, 1),
          loop.describe());
    } finally {
      if (pool != null) {
        pool.shutdownNow();
      }
    }
  }

  private static void runPass(
      ExecutorService pool,
      int threads,
      GatherLoop loop,
      float[] table,
      int width,
      int[] indices,
      float[] out,
      int rows) {
    if (pool == null) {
      loop.gather(table, width, indices, ROWS_PER_TARGET, out, 0, rows);
      return;
    }
    List<Future<?>> parts = new ArrayList<>(threads);
    for (int t = 0; t < threads; t++) {
      int from = (int) ((long) rows * t / threads);
      int to = (int) ((long) rows * (t + 1) / threads);
      parts.add(
          pool.submit(() -> loop.gather(table, width, indices, ROWS_PER_TARGET, out, from, to)));
    }
    for (Future<?> part : parts) {
      try {
        part.get();
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
        throw new IllegalStateException("interrupted while measuring the gather rate", e);
      } catch (ExecutionException e) {
        throw new IllegalStateException("gather loop failed: " + e.getCause(), e.getCause());
      }
    }
  }

  private static ThreadFactory daemon() {
    return r -> {
      Thread t = new Thread(r, "heed-gather-probe");
      t.setDaemon(true);
      return t;
    };
  }
}
