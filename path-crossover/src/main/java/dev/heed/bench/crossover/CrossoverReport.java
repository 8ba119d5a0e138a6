package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import dev.heed.attention.PathCosts;
import dev.heed.bench.roofline.GatherProbe;
import dev.heed.bench.roofline.MachineLimits;
import java.io.IOException;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Collections;
import java.util.EnumMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;

/**
 * The result of a crossover sweep: every point, the crossover per score and node count, the growth
 * checks, and what ran. It formats itself as a text table and writes itself as CSV; {@link
 * CrossoverChart} draws it.
 *
 * <p>Thread safety: immutable.
 */
public final class CrossoverReport {

  /** The CSV columns, in order. */
  public static final List<String> CSV_COLUMNS =
      List.of(
          "score",
          "n",
          "density",
          "edges",
          "path",
          "median_ms",
          "min_ms",
          "max_ms",
          "q1_ms",
          "q3_ms",
          "spread",
          "ci_low_ms",
          "ci_high_ms",
          "discarded",
          "extra_rounds",
          "warmup_calls",
          "reps",
          "achieved",
          "limit",
          "unit",
          "roofline_fraction",
          "note");

  /** The statement printed with every result: this tool sweeps, JMH measures. */
  public static final String AUTHORITY =
      "This is an in-process sweep (warm-up until stable, median of repeated calls, both paths in"
          + " one JVM). The JMH benchmarks in benchmarks.jar (separate forks) are the authority for"
          + " precise figures.";

  private final SweepConfig config;
  private final MachineLimits limits;
  private final Map<ComputePath, String> kernels;
  private final List<SweepPoint> points;
  private final List<Crossover> crossovers;
  private final List<GrowthCheck> growth;
  private final double largestPathDifference;
  private final double peakLoadAverage;
  private final Duration elapsed;
  private final AutoCheck autoCheck;
  private final NoiseCheck noiseCheck;

  /**
   * Assembles a report and computes the crossovers and growth checks from the points.
   *
   * @param config what was swept
   * @param limits the machine limits used for the roofline fractions
   * @param kernels a description of each path's kernel (or why it was unavailable)
   * @param points every point, in sweep order; copied
   * @param largestPathDifference the largest norm-wise relative difference between the two paths'
   *     outputs over the points where both ran, or NaN if none
   * @param peakLoadAverage the highest one-minute system load average seen during the sweep, or NaN
   *     if the platform does not report it
   * @param elapsed how long the sweep took
   * @param costs the path cost profile whose AUTO choices are checked against the points
   * @param startLoadAverage the one-minute system load average before the first point, or NaN
   */
  public CrossoverReport(
      SweepConfig config,
      MachineLimits limits,
      Map<ComputePath, String> kernels,
      List<SweepPoint> points,
      double largestPathDifference,
      double peakLoadAverage,
      Duration elapsed,
      PathCosts costs,
      double startLoadAverage) {
    this.config = Objects.requireNonNull(config, "config");
    this.limits = Objects.requireNonNull(limits, "limits");
    this.kernels = Collections.unmodifiableMap(new EnumMap<>(kernels));
    this.points = List.copyOf(points);
    this.largestPathDifference = largestPathDifference;
    this.peakLoadAverage = peakLoadAverage;
    this.elapsed = Objects.requireNonNull(elapsed, "elapsed");
    List<Crossover> found = new ArrayList<>();
    List<GrowthCheck> checks = new ArrayList<>();
    for (SweepScore score : config.scores()) {
      for (int n : config.nodeCounts()) {
        found.add(Crossovers.find(score, n, this.points));
      }
      checks.add(GrowthCheck.fit(score, ComputePath.DENSE, this.points));
      checks.add(GrowthCheck.fit(score, ComputePath.SPARSE, this.points));
    }
    this.crossovers = List.copyOf(found);
    this.growth = List.copyOf(checks);
    this.autoCheck = AutoCheck.of(config, this.points, costs);
    this.noiseCheck = NoiseCheck.of(config, this.points, startLoadAverage, peakLoadAverage);
  }

  /**
   * Returns how well the cost model's AUTO choices matched the measured faster path.
   *
   * @return the check
   */
  public AutoCheck autoCheck() {
    return autoCheck;
  }

  /**
   * Returns whether the machine was quiet enough for the timings to be trusted.
   *
   * @return the check
   */
  public NoiseCheck noiseCheck() {
    return noiseCheck;
  }

  /**
   * Returns the configuration swept.
   *
   * @return the configuration
   */
  public SweepConfig config() {
    return config;
  }

  /**
   * Returns the machine limits used.
   *
   * @return the limits
   */
  public MachineLimits limits() {
    return limits;
  }

  /**
   * Returns each path's kernel description, or why none was available.
   *
   * @return an unmodifiable map
   */
  public Map<ComputePath, String> kernels() {
    return kernels;
  }

  /**
   * Returns every point in sweep order.
   *
   * @return an unmodifiable list
   */
  public List<SweepPoint> points() {
    return points;
  }

  /**
   * Returns the crossover for each score and node count.
   *
   * @return an unmodifiable list
   */
  public List<Crossover> crossovers() {
    return crossovers;
  }

  /**
   * Returns the growth checks (dense time vs n, sparse time vs E) per score.
   *
   * @return an unmodifiable list
   */
  public List<GrowthCheck> growthChecks() {
    return growth;
  }

  /**
   * Returns the largest relative difference between the two paths' outputs, or NaN.
   *
   * @return the norm-wise relative difference
   */
  public double largestPathDifference() {
    return largestPathDifference;
  }

  /**
   * Returns the highest one-minute system load average seen during the sweep, or NaN.
   *
   * @return the load average
   */
  public double peakLoadAverage() {
    return peakLoadAverage;
  }

  /**
   * Returns whether other work or noise probably disturbed the timings ({@link
   * NoiseCheck#noisy()}).
   *
   * @return true if the machine was noisy
   */
  public boolean machineWasBusy() {
    return noiseCheck.noisy();
  }

  /**
   * Returns how long the sweep took.
   *
   * @return the duration
   */
  public Duration elapsed() {
    return elapsed;
  }

  /**
   * Formats the report as text: set-up, one table per score, crossovers, growth checks, skipped
   * points and the authority statement.
   *
   * @return the text, lines separated by {@code \n}
   */
  public String formatText() {
    StringBuilder b = new StringBuilder();
    b.append("Heed crossover sweep").append(config.quick() ? " (quick)" : "").append('\n');
    b.append(
        String.format(
            Locale.ROOT,
            "shape: %d heads x %d value dims; key dims %d for dot-product, 1 for additive;"
                + " %d threads; seed %d%n",
            config.heads(),
            config.valueDim(),
            config.keyDim(),
            config.threads(),
            config.seed()));
    b.append("graphs: uniform random rows (seeded), 100 % = complete pattern\n");
    for (Map.Entry<ComputePath, String> e : kernels.entrySet()) {
      b.append("kernel ").append(e.getKey()).append(": ").append(e.getValue()).append('\n');
    }
    b.append(
        String.format(
            Locale.ROOT,
            "limits: GEMM %.1f GFLOP/s (n=%d); gather (%s): %s%n",
            limits.gemm().gflops(),
            limits.gemm().size(),
            gatherLoopName(),
            gatherText()));
    b.append(
        String.format(
            Locale.ROOT,
            "timing: both paths warmed up first on small graphs of both pattern kinds; per point"
                + " the two paths alternate: warm-up %d..%d calls each (stable within %.0f %%),"
                + " then %d timed calls each, A B A B; calls above Q3 + 3 IQR dropped; a point"
                + " spreading over %.0f %% is timed again (up to %d more batches, then once more"
                + " at the end of the sweep; the tightest batch kept); median with a"
                + " 95 %% confidence interval; spread = (max - min) / median%n",
            config.timing().minWarmupCalls(),
            config.timing().maxWarmupCalls(),
            config.timing().stableTolerance() * 100,
            config.timing().repetitions(),
            config.timing().maxSpread() * 100,
            config.timing().extraRounds()));
    for (SweepScore score : config.scores()) {
      b.append('\n').append(table(score));
    }
    b.append("\nCrossover (sparse faster at and below this density):\n");
    for (Crossover c : crossovers) {
      b.append(
          String.format(
              Locale.ROOT, "  %-11s n=%-6d %s%n", c.score().label(), c.n(), c.describe()));
    }
    b.append("\nGrowth check (common practice: dense ~ n^2, sparse ~ E):\n");
    for (GrowthCheck g : growth) {
      b.append("  ").append(g.score().label()).append(": ").append(g.describe()).append('\n');
    }
    b.append('\n').append(autoCheck.describe());
    b.append("\nNoise check:\n").append(noiseCheck.describe());
    if (!Double.isNaN(largestPathDifference)) {
      b.append(
          String.format(
              Locale.ROOT,
              "%nPaths agree: largest relative difference between dense and sparse outputs %.2g%n",
              largestPathDifference));
    }
    List<String> notes = new ArrayList<>();
    for (SweepPoint p : points) {
      if (!p.note().isEmpty()) {
        notes.add(
            String.format(
                Locale.ROOT,
                "  %s n=%d density=%s %s: %s",
                p.score().label(),
                p.n(),
                Formats.percent(p.density()),
                p.path(),
                p.note()));
      }
    }
    if (!notes.isEmpty()) {
      b.append("\nSkipped points and remarks:\n");
      for (String note : notes) {
        b.append(note).append('\n');
      }
    }
    b.append('\n').append("Sweep took ").append(Formats.duration(elapsed)).append(".");
    if (!Double.isNaN(peakLoadAverage)) {
      b.append(
          String.format(
              Locale.ROOT,
              " Peak system load average %.1f (%d processors, %d kernel threads).",
              peakLoadAverage,
              Runtime.getRuntime().availableProcessors(),
              config.threads()));
    }
    b.append('\n');
    if (machineWasBusy()) {
      b.append(
          "WARNING: noisy machine (see the noise check); the timings, the crossovers and the AUTO"
              + " check are unreliable. Run it again on an idle machine.\n");
    }
    b.append(AUTHORITY).append('\n');
    return b.toString();
  }

  private String gatherLoopName() {
    return limits.gatherByTableRows().values().iterator().next().loop();
  }

  private String gatherText() {
    StringBuilder b = new StringBuilder();
    for (Map.Entry<Integer, GatherProbe.Measurement> e : limits.gatherByTableRows().entrySet()) {
      if (b.length() > 0) {
        b.append(", ");
      }
      b.append(
          String.format(
              Locale.ROOT,
              "%.0f M rows/s at %d rows",
              e.getValue().rowsPerSecond() / 1e6,
              e.getKey()));
    }
    return b.toString();
  }

  private String table(SweepScore score) {
    StringBuilder b = new StringBuilder();
    b.append("score: ").append(score.label()).append(" (").append(score.function()).append(")\n");
    b.append(
        String.format(
            Locale.ROOT,
            "%7s %8s %11s | %9s %7s %7s | %9s %7s %7s | %s%n",
            "n",
            "density",
            "edges",
            "dense ms",
            "spread",
            "roof",
            "sparse ms",
            "spread",
            "roof",
            "faster"));
    for (int n : config.nodeCounts()) {
      for (double d : config.densities()) {
        SweepPoint dense = find(score, n, d, ComputePath.DENSE);
        SweepPoint sparse = find(score, n, d, ComputePath.SPARSE);
        if (dense == null && sparse == null) {
          continue;
        }
        long edges = dense != null ? dense.edges() : sparse.edges();
        String faster = "";
        if (dense != null && sparse != null && dense.measured() && sparse.measured()) {
          double ratio = sparse.timing().medianNanos() / dense.timing().medianNanos();
          faster =
              ratio < 1
                  ? String.format(Locale.ROOT, "sparse x%.2f", 1 / ratio)
                  : String.format(Locale.ROOT, "dense x%.2f", ratio);
        }
        b.append(
            String.format(
                Locale.ROOT,
                "%7d %8s %11d | %s | %s | %s%n",
                n,
                Formats.percent(d),
                edges,
                cells(dense),
                cells(sparse),
                faster));
      }
    }
    return b.toString();
  }

  private static String cells(SweepPoint p) {
    if (p == null || !p.measured()) {
      return String.format(Locale.ROOT, "%9s %7s %7s", "skipped", "", "");
    }
    return String.format(
        Locale.ROOT,
        "%9s %6.0f%% %6.1f%%",
        Formats.millis(p.timing().medianMillis()),
        p.timing().relativeSpread() * 100,
        p.rooflineFraction() * 100);
  }

  private SweepPoint find(SweepScore score, int n, double density, ComputePath path) {
    for (SweepPoint p : points) {
      if (p.score() == score && p.n() == n && p.density() == density && p.path() == path) {
        return p;
      }
    }
    return null;
  }

  /**
   * Writes the points as CSV (RFC 4180, a header line of {@link #CSV_COLUMNS}, UTF-8). Densities
   * are fractions; times in milliseconds; {@code spread} is {@code (max − min) / median}; empty
   * fields for skipped points.
   *
   * @param file output, created or replaced
   * @throws IOException if it cannot be written
   */
  public void writeCsv(Path file) throws IOException {
    try (Writer w = Files.newBufferedWriter(file, StandardCharsets.UTF_8)) {
      w.write(String.join(",", CSV_COLUMNS));
      w.write("\r\n");
      for (SweepPoint p : points) {
        TimingResult t = p.timing();
        List<String> f = new ArrayList<>();
        f.add(p.score().label());
        f.add(Integer.toString(p.n()));
        f.add(Formats.csvNumber(p.density()));
        f.add(Long.toString(p.edges()));
        f.add(p.path().name().toLowerCase(Locale.ROOT));
        f.add(t == null ? "" : Formats.csvNumber(t.medianNanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.minNanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.maxNanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.q1Nanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.q3Nanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.relativeSpread()));
        f.add(t == null ? "" : Formats.csvNumber(t.ciLowNanos() / 1e6));
        f.add(t == null ? "" : Formats.csvNumber(t.ciHighNanos() / 1e6));
        f.add(t == null ? "" : Integer.toString(t.discarded()));
        f.add(t == null ? "" : Integer.toString(t.extraRounds()));
        f.add(t == null ? "" : Integer.toString(t.warmupCalls()));
        f.add(t == null ? "" : Integer.toString(t.repetitions()));
        f.add(Formats.csvNumber(p.achieved()));
        f.add(Formats.csvNumber(p.limit()));
        f.add(p.unit());
        f.add(Formats.csvNumber(p.rooflineFraction()));
        f.add(Formats.csvText(p.note()));
        w.write(String.join(",", f));
        w.write("\r\n");
      }
    }
  }
}
