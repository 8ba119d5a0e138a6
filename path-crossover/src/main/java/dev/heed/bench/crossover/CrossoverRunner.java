package dev.heed.bench.crossover;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.attention.PathCosts;
import dev.heed.attention.ScoreFunction;
import dev.heed.bench.roofline.GatherProbe;
import dev.heed.bench.roofline.MachineLimits;
import dev.heed.graph.AttentionPattern;
import java.io.IOException;
import java.io.PrintStream;
import java.lang.management.ManagementFactory;
import java.lang.module.ModuleFinder;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Duration;
import java.util.ArrayList;
import java.util.EnumMap;
import java.util.HashSet;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;

/**
 * Sweeps node counts and densities on both attention paths and reports, for each node count and
 * score, the density below which the sparse path is faster than the dense one, on this machine.
 *
 * <p>Command line ({@code heed bench crossover} runs the same sweep; the Vector API module is added
 * by re-launching the JVM when it is missing; {@code --no-relaunch} prevents that):
 *
 * <pre>
 * java -cp cli/target/heed.jar dev.heed.bench.crossover.CrossoverRunner [--quick] [--out DIR]
 *     [--threads N] [--seed S] [--n 256,1024] [--densities 0.1,1,10,100] [--scores additive,dot-product]
 *     [--max-call-seconds X] [--dense-budget-mib M] [--no-relaunch]
 * </pre>
 *
 * <p>It prints the table to stdout, progress to stderr, and writes {@code crossover.csv}, {@code
 * crossover.png} and {@code crossover.txt} to the output folder (default {@value #DEFAULT_OUT}).
 *
 * <p>As a library: {@link #run} runs a sweep with injected kernels, limits and progress display and
 * returns a {@link CrossoverReport}; {@link #writeOutputs} writes the files.
 *
 * <p>Timing: per point, warm-up calls until three in a row agree (or a cap is reached), then the
 * median of repeated calls with min/max and quartiles; seeded graphs and inputs; every output is
 * read back. Points that cannot fit (more entries than an int CSR holds, a graph larger than the
 * free heap, a dense call over its memory budget, a call estimated to take longer than the per-call
 * cap) are skipped and named in the output. The JMH benchmarks are the authority for precise
 * figures.
 *
 * <p>Thread safety: stateless; {@link #run} may be called from any one thread at a time per sweep.
 */
public final class CrossoverRunner {

  /** The default output folder: {@value}. */
  public static final String DEFAULT_OUT = "heed-crossover";

  private static final String RELAUNCHED = "heed.bench.relaunched";

  private static volatile double sink;

  /** The remark on a point timed again at the end because its spread was high. */
  static final String RETIMED_NOTE = "timed again at the end of the sweep (spread was high)";

  /** The remark on a dense point timed again at the end because it was far above its line. */
  static final String OFF_LINE_NOTE =
      "timed again at the end of the sweep (far above the dense line; the faster timing kept)";

  /** Nodes of the warm-up graphs. */
  static final int PREWARM_NODES = 128;

  /** Rounds of the warm-up over every kernel, score and pattern kind, at most. */
  static final int PREWARM_ROUNDS = 200;

  /** Seconds of the warm-up, at most. */
  static final double PREWARM_MAX_SECONDS = 3.0;

  private CrossoverRunner() {}

  /**
   * Runs the sweep from the command line; see the class description for the arguments.
   *
   * @param args the arguments
   */
  public static void main(String[] args) {
    CommandLine cli;
    try {
      cli = CommandLine.parse(args);
    } catch (IllegalArgumentException e) {
      System.err.println("crossover: " + e.getMessage());
      System.err.println(CommandLine.USAGE);
      System.exit(2);
      return;
    }
    if (cli.help()) {
      System.out.println(CommandLine.USAGE);
      return;
    }
    if (!GatherProbe.vectorApiAvailable()
        && ModuleFinder.ofSystem().find("jdk.incubator.vector").isPresent()
        && !List.of(args).contains("--no-relaunch")
        && System.getProperty(RELAUNCHED) == null) {
      Integer code = relaunchWithVectorApi(args);
      if (code != null) {
        System.exit(code);
        return;
      }
    }
    setIfUnset("java.awt.headless", "true");
    setIfUnset("org.nd4j.log.initialization", "false");
    setIfUnset("org.slf4j.simpleLogger.defaultLogLevel", "warn");
    ProgressListener progress = ProgressListener.printingTo(System.err);
    progress.message(CrossoverReport.AUTHORITY);
    if (!GatherProbe.vectorApiAvailable()) {
      progress.message(
          "note: jdk.incubator.vector is not readable; the sparse kernel and the gather limit may"
              + " run scalar code. Run java with --add-modules jdk.incubator.vector.");
    }
    try {
      CrossoverReport report = run(cli.config(), KernelFactory.registered(), null, progress);
      PrintStream out = new PrintStream(System.out, true, StandardCharsets.UTF_8);
      out.print(report.formatText());
      List<Path> files = writeOutputs(report, cli.out());
      for (Path f : files) {
        out.println("wrote " + f);
      }
    } catch (IOException e) {
      System.err.println("crossover: could not write the output: " + e.getMessage());
      System.exit(1);
    }
  }

  private static String sweepName(SweepConfig config) {
    SweepConfig standard = config.quick() ? SweepConfig.quickSweep() : SweepConfig.fullSweep();
    boolean sameGrid =
        standard.nodeCounts().equals(config.nodeCounts())
            && standard.densities().equals(config.densities())
            && standard.scores().equals(config.scores());
    return sameGrid ? (config.quick() ? "quick" : "full") : "custom";
  }

  private static void setIfUnset(String property, String value) {
    if (System.getProperty(property) == null) {
      System.setProperty(property, value);
    }
  }

  /**
   * Measures the machine limits this sweep needs: GEMM, and the gather rate for a value table of
   * each node count.
   *
   * @param config the sweep
   * @param progress receives one line per measurement
   * @return the limits
   */
  public static MachineLimits measureLimits(SweepConfig config, ProgressListener progress) {
    int[] rows = config.nodeCounts().stream().mapToInt(Integer::intValue).toArray();
    return MachineLimits.measure(
        rows,
        config.heads() * config.valueDim(),
        config.threads(),
        config.quick(),
        progress::message);
  }

  /**
   * Runs the sweep.
   *
   * @param config what to sweep
   * @param kernels supplies each path's kernel; a path whose kernel cannot be created is skipped
   *     and the report says why
   * @param limits the machine limits for roofline fractions, or null to measure them first
   * @param progress receives progress: limits, the expected duration, then every point
   * @return the report
   */
  public static CrossoverReport run(
      SweepConfig config, KernelFactory kernels, MachineLimits limits, ProgressListener progress) {
    return run(config, kernels, limits, progress, PathCosts.current());
  }

  /**
   * Runs the sweep, checking the AUTO choices of a given path cost profile against it.
   *
   * @param config what to sweep
   * @param kernels supplies each path's kernel; a path whose kernel cannot be created is skipped
   *     and the report says why
   * @param limits the machine limits for roofline fractions, or null to measure them first
   * @param progress receives progress: limits, the expected duration, then every point
   * @param costs the profile whose choices the report checks, and which estimates the duration
   * @return the report
   */
  public static CrossoverReport run(
      SweepConfig config,
      KernelFactory kernels,
      MachineLimits limits,
      ProgressListener progress,
      PathCosts costs) {
    long start = System.nanoTime();
    double startLoad = ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage();
    Map<ComputePath, AttentionKernel> available = new EnumMap<>(ComputePath.class);
    Map<ComputePath, String> described = new EnumMap<>(ComputePath.class);
    for (ComputePath path : ComputePath.values()) {
      try {
        AttentionKernel k = kernels.create(path, config.kernelOptions());
        available.put(path, k);
        described.put(path, k.describe());
      } catch (RuntimeException | LinkageError e) {
        described.put(path, "unavailable: " + e.getMessage());
      }
      progress.message("kernel " + path + ": " + described.get(path));
    }
    if (limits == null) {
      progress.message(
          "measuring machine limits (GEMM and gather; about "
              + (config.quick() ? "5" : "30")
              + " s)...");
      limits = measureLimits(config, progress);
    }
    Sweep sweep = new Sweep(config, available, described, limits, progress, start, costs);
    double prewarm = sweep.prewarm();
    Duration expected = estimateDuration(config, costs);
    progress.message(
        String.format(
            Locale.ROOT,
            "%s sweep: %d points (%d n x %d densities x %d scores x 2 paths); JIT warm-up of both"
                + " paths %.1f s; expected duration about %s (from the path cost model, %s; calls"
                + " estimated over %.1f s are skipped)",
            sweepName(config),
            config.pointCount(),
            config.nodeCounts().size(),
            config.densities().size(),
            config.scores().size(),
            prewarm,
            Formats.duration(expected),
            costs.source(),
            config.maxCallSeconds()));
    if (startLoad > Runtime.getRuntime().availableProcessors() * 0.5) {
      progress.message(
          String.format(
              Locale.ROOT,
              "note: load average %.2f on %d processors: other work is running, expect noisy"
                  + " timings",
              startLoad,
              Runtime.getRuntime().availableProcessors()));
    }
    sweep.runAll();
    return new CrossoverReport(
        config,
        limits,
        described,
        sweep.points,
        sweep.largestDifference,
        sweep.peakLoad,
        Duration.ofNanos(System.nanoTime() - start),
        costs,
        startLoad);
  }

  /**
   * Estimates how long a sweep will take from the path cost model's predicted call times and the
   * timing policy (warm-up, repetitions, caps).
   *
   * @param config the sweep
   * @param costs the path cost profile
   * @return the estimate
   */
  public static Duration estimateDuration(SweepConfig config, PathCosts costs) {
    double seconds = 0;
    for (double s : pointEstimates(config, costs)) {
      seconds += s;
    }
    return Duration.ofMillis(Math.round(seconds * 1000));
  }

  /**
   * Writes {@code crossover.csv}, {@code crossover.png} and {@code crossover.txt} (the printed
   * report) into {@code dir}, creating it if needed.
   *
   * @param report the sweep result
   * @param dir the output folder
   * @return the files written
   * @throws IOException if a file cannot be written
   */
  public static List<Path> writeOutputs(CrossoverReport report, Path dir) throws IOException {
    Files.createDirectories(dir);
    Path csv = dir.resolve("crossover.csv");
    Path png = dir.resolve("crossover.png");
    Path txt = dir.resolve("crossover.txt");
    report.writeCsv(csv);
    CrossoverChart.writePng(report, png);
    Files.writeString(txt, report.formatText(), StandardCharsets.UTF_8);
    return List.of(csv, png, txt);
  }

  // ---------------------------------------------------------------------------------------------

  /** Estimated seconds of every point, in sweep order. */
  static double[] pointEstimates(SweepConfig config, PathCosts costs) {
    double[] est = new double[config.pointCount()];
    int i = 0;
    for (int n : config.nodeCounts()) {
      for (double d : config.densities()) {
        long edges = RandomPatterns.entryCount(n, d);
        for (SweepScore score : config.scores()) {
          HeadShape shape = score.shape(config.heads(), config.keyDim(), config.valueDim());
          for (ComputePath path : ComputePath.values()) {
            double call = modelCallSeconds(path, shape, score, n, d, edges, costs, config);
            est[i++] = call > config.maxCallSeconds() ? 0.0 : pointSeconds(call, config.timing());
          }
        }
      }
    }
    return est;
  }

  /**
   * Whether a dense point's median lies more than {@link NoiseCheck#MAX_DENSE_RANGE} above the
   * fastest median of its line (the line includes the point), the flatness the noise check asks
   * for; lines of fewer than 3 points are never judged.
   *
   * @param medianNanos the point's median
   * @param line the medians of the line's points (not modified)
   * @return true if the point alone would make its line fail the flatness test
   */
  static boolean farAboveLine(double medianNanos, List<Double> line) {
    if (line.size() < 3) {
      return false;
    }
    double fastest = Double.POSITIVE_INFINITY;
    for (double m : line) {
      fastest = Math.min(fastest, m);
    }
    return medianNanos > (1 + NoiseCheck.MAX_DENSE_RANGE) * fastest;
  }

  /** The work of one call: dense flops 2·n²·H·(dk+dv); sparse gathered value rows E. */
  static double work(ComputePath path, HeadShape shape, int n, long edges) {
    if (path == ComputePath.DENSE) {
      return 2.0 * n * (double) n * shape.heads() * (shape.keyDim() + shape.valueDim());
    }
    return edges;
  }

  private static double modelCallSeconds(
      ComputePath path,
      HeadShape shape,
      SweepScore score,
      int n,
      double density,
      long edges,
      PathCosts costs,
      SweepConfig config) {
    return costs
        .estimate(n, edges, density >= 1.0, score.function(), shape, config.threads())
        .seconds(path);
  }

  /** Warm-up and timed calls of one point (one path), with the policy's caps. */
  private static double pointSeconds(double call, TimingPolicy policy) {
    int warmCalls = Math.min(policy.maxWarmupCalls(), Math.max(policy.minWarmupCalls(), 3) + 1);
    double warm = Math.min(warmCalls * call, policy.maxWarmupSeconds() + call);
    double timed =
        Math.min(
            policy.repetitions() * call,
            Math.max(policy.maxTimedSeconds(), policy.minRepetitions() * call));
    // graph building, reading outputs back, the odd repeated batch: about 20 % on top (measured
    // against the quick sweep's points)
    return 1.2 * (warm + timed);
  }

  private static Integer relaunchWithVectorApi(String[] args) {
    List<String> command = new ArrayList<>();
    command.add(Path.of(System.getProperty("java.home"), "bin", "java").toString());
    command.add("--add-modules");
    command.add("jdk.incubator.vector");
    command.add("-D" + RELAUNCHED + "=true");
    command.addAll(ManagementFactory.getRuntimeMXBean().getInputArguments());
    command.add("-cp");
    command.add(System.getProperty("java.class.path"));
    command.add(CrossoverRunner.class.getName());
    command.addAll(List.of(args));
    try {
      Process p = new ProcessBuilder(command).inheritIO().start();
      return p.waitFor();
    } catch (IOException e) {
      System.err.println(
          "crossover: could not re-launch with --add-modules jdk.incubator.vector ("
              + e.getMessage()
              + "); running without it");
      return null;
    } catch (InterruptedException e) {
      Thread.currentThread().interrupt();
      return 130;
    }
  }

  /** The state of one sweep run. */
  private static final class Sweep {
    private final SweepConfig config;
    private final Map<ComputePath, AttentionKernel> kernels;
    private final Map<ComputePath, String> described;
    private final MachineLimits limits;
    private final ProgressListener progress;
    private final long start;
    private final PathCosts costs;
    private final double[] estimates;
    private final List<SweepPoint> points = new ArrayList<>();

    /** First calls that were too slow to time: {path, score, n, edges, nanos}. */
    private final List<double[]> slowCalls = new ArrayList<>();

    private double largestDifference = Double.NaN;
    private double peakLoad = Double.NaN;
    private int index;

    Sweep(
        SweepConfig config,
        Map<ComputePath, AttentionKernel> kernels,
        Map<ComputePath, String> described,
        MachineLimits limits,
        ProgressListener progress,
        long start,
        PathCosts costs) {
      this.config = config;
      this.kernels = kernels;
      this.described = described;
      this.limits = limits;
      this.progress = progress;
      this.start = start;
      this.costs = costs;
      this.estimates = pointEstimates(config, costs);
    }

    /**
     * Runs every kernel and score on small graphs of both pattern kinds (CSR and complete),
     * alternately, before anything is timed: the JIT then compiles the kernels with both kinds in
     * their profiles, and the dense path's native start-up is paid here. Without it, the first
     * complete-pattern point after CSR ones ran while the JIT recompiled the sparse per-head pass
     * (uncommon traps on branches its profile had never seen taken), 100x slower than steady state.
     *
     * @return seconds spent
     */
    double prewarm() {
      long t0 = System.nanoTime();
      int n = PREWARM_NODES;
      AttentionPattern[] patterns = {
        RandomPatterns.uniform(n, 0.05, config.seed()), dev.heed.graph.CompletePattern.of(n)
      };
      List<Runnable> calls = new ArrayList<>();
      for (SweepScore score : config.scores()) {
        HeadShape shape = score.shape(config.heads(), config.keyDim(), config.valueDim());
        Inputs in = Inputs.random(n, shape, seedFor(n, score));
        float[] out = new float[in.value.length];
        for (ComputePath path : ComputePath.values()) {
          AttentionKernel k = kernels.get(path);
          if (k == null) {
            continue;
          }
          for (AttentionPattern pattern : patterns) {
            calls.add(
                () ->
                    k.attend(
                        pattern, score.function(), shape, in.query, in.key, in.value, out, null));
          }
        }
      }
      for (int round = 0; round < PREWARM_ROUNDS; round++) {
        for (Runnable c : calls) {
          try {
            c.run();
          } catch (RuntimeException | LinkageError e) {
            return (System.nanoTime() - t0) * 1e-9; // the point itself will report it
          }
        }
        if ((System.nanoTime() - t0) * 1e-9 > PREWARM_MAX_SECONDS) {
          break;
        }
      }
      return (System.nanoTime() - t0) * 1e-9;
    }

    void runAll() {
      long sweepStart = System.nanoTime();
      for (int n : config.nodeCounts()) {
        for (double density : config.densities()) {
          long edges = RandomPatterns.entryCount(n, density);
          AttentionPattern pattern = null;
          String patternProblem = "";
          if (overTime(sweepStart)) {
            patternProblem = timeLimitText();
          } else {
            try {
              pattern = buildPattern(n, density, edges);
            } catch (IllegalArgumentException | OutOfMemoryError e) {
              patternProblem = "graph not built: " + e.getMessage();
            }
          }
          for (SweepScore score : config.scores()) {
            HeadShape shape = score.shape(config.heads(), config.keyDim(), config.valueDim());
            Inputs in = pattern == null ? null : Inputs.random(n, shape, seedFor(n, score));
            Outcome[] outcomes =
                overTime(sweepStart)
                    ? new Outcome[] {
                      skipped(score, n, density, edges, ComputePath.DENSE, timeLimitText()),
                      skipped(score, n, density, edges, ComputePath.SPARSE, timeLimitText())
                    }
                    : runPaths(score, shape, n, density, edges, pattern, in, patternProblem);
            float[] denseOut = outcomes[0].out;
            for (Outcome o : outcomes) {
              SweepPoint p = o.point;
              if (p.path() == ComputePath.SPARSE && denseOut != null && o.out != null) {
                double diff = relativeDifference(denseOut, o.out);
                largestDifference =
                    Double.isNaN(largestDifference) ? diff : Math.max(largestDifference, diff);
                if (!(diff <= 1e-3)) {
                  p =
                      p.withNote(
                          String.format(
                              Locale.ROOT,
                              "paths disagree: relative difference %.2g between dense and sparse"
                                  + " outputs",
                              diff));
                }
              }
              points.add(p);
              index++;
              report(p, sweepStart);
            }
          }
        }
      }
      retimeDisturbedPoints(sweepStart);
    }

    /**
     * Times once more, after every other point, each point whose timing looks disturbed, and keeps
     * for each path the better of its two timings:
     *
     * <ul>
     *   <li>a point whose calls still spread by more than the policy's {@code maxSpread} after its
     *       extra batches: the timing with the smaller spread is kept;
     *   <li>a dense point whose median is more than {@link NoiseCheck#MAX_DENSE_RANGE} above the
     *       fastest point of its line (same score and n; the dense path's cost does not depend on
     *       density), so that the line would fail the noise check's flatness test: the timing with
     *       the smaller median is kept. Such a point was slow for all of its calls alike (its
     *       spread is small), as when the JIT recompiles a kernel while the point runs; other work
     *       and recompilation only ever slow a call down.
     * </ul>
     *
     * A disturbance that lasted through a point has usually passed by the end of the sweep, while
     * more batches at once would have met it again. Both paths of a point are timed again together,
     * and a path that was not itself disturbed keeps its first timing. Points over the sweep's time
     * limit stay as they are.
     */
    private void retimeDisturbedPoints(long sweepStart) {
      Set<String> retimed = new HashSet<>();
      for (int at = 0; at < points.size(); at++) {
        SweepPoint first = points.get(at);
        String key = first.score() + " " + first.n() + " " + first.density();
        if (!(wide(first) || offLine(first)) || !retimed.add(key)) {
          continue;
        }
        if (overTime(sweepStart)) {
          return;
        }
        int n = first.n();
        double density = first.density();
        SweepScore score = first.score();
        AttentionPattern pattern;
        try {
          pattern = buildPattern(n, density, first.edges());
        } catch (IllegalArgumentException | OutOfMemoryError e) {
          continue; // it was built once; keep the first timing rather than fail the sweep
        }
        HeadShape shape = score.shape(config.heads(), config.keyDim(), config.valueDim());
        Inputs in = Inputs.random(n, shape, seedFor(n, score));
        for (Outcome o : runPaths(score, shape, n, density, first.edges(), pattern, in, "")) {
          SweepPoint again = o.point;
          for (int i = 0; i < points.size(); i++) {
            SweepPoint old = points.get(i);
            if (!again.measured()
                || !old.measured()
                || old.score() != score
                || old.n() != n
                || old.density() != density
                || old.path() != again.path()) {
              continue;
            }
            if (offLine(old) && again.timing().medianNanos() < old.timing().medianNanos()) {
              points.set(i, again.withNote(joinNotes(old.note(), OFF_LINE_NOTE)));
            } else if (wide(old)
                && again.timing().relativeSpread() < old.timing().relativeSpread()) {
              points.set(i, again.withNote(joinNotes(old.note(), RETIMED_NOTE)));
            }
          }
        }
      }
    }

    private boolean wide(SweepPoint p) {
      return p.measured() && p.timing().relativeSpread() > config.timing().maxSpread();
    }

    /** A dense point more than {@link NoiseCheck#MAX_DENSE_RANGE} above its line's fastest. */
    private boolean offLine(SweepPoint p) {
      if (!p.measured() || p.path() != ComputePath.DENSE) {
        return false;
      }
      List<Double> line = new ArrayList<>();
      for (SweepPoint q : points) {
        if (q.measured()
            && q.path() == ComputePath.DENSE
            && q.score() == p.score()
            && q.n() == p.n()) {
          line.add(q.timing().medianNanos());
        }
      }
      return farAboveLine(p.timing().medianNanos(), line);
    }

    private static String joinNotes(String first, String second) {
      return first.isEmpty() ? second : first + "; " + second;
    }

    private double limitFor(ComputePath path, int n) {
      return path == ComputePath.DENSE
          ? limits.gemm().gflops()
          : limits.gatherRowsPerSecond(n) / 1e6;
    }

    private static String unitFor(ComputePath path) {
      return path == ComputePath.DENSE ? "GFLOP/s" : "Mrows/s";
    }

    private boolean overTime(long sweepStart) {
      return config.maxSweepSeconds() > 0
          && (System.nanoTime() - sweepStart) * 1e-9 > config.maxSweepSeconds();
    }

    private String timeLimitText() {
      return String.format(
          Locale.ROOT, "the sweep's time limit of %.0f s was reached", config.maxSweepSeconds());
    }

    private void report(SweepPoint p, long sweepStart) {
      double load = ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage();
      if (load >= 0) {
        peakLoad = Double.isNaN(peakLoad) ? load : Math.max(peakLoad, load);
      }
      if (!p.measured()) {
        estimates[index - 1] = 0; // a skipped point costs next to nothing; keep the rate honest
      }
      double elapsed = (System.nanoTime() - sweepStart) * 1e-9;
      double estimatedDone = 0;
      for (int i = 0; i < index; i++) {
        estimatedDone += estimates[i];
      }
      double estimatedLeft = 0;
      for (int i = index; i < estimates.length; i++) {
        estimatedLeft += estimates[i];
      }
      // the measured rate, pulled towards the model's while little is done (a tenth of the
      // estimate as a prior weight): the first points alone said 10x too slow or too fast
      double prior = 0.1 * (estimatedDone + estimatedLeft);
      double factor = (elapsed + prior) / (estimatedDone + prior);
      factor = Math.max(0.25, Math.min(4, factor));
      double left = estimatedLeft * factor;
      if (config.maxSweepSeconds() > 0) {
        // points still left at the time limit are skipped at once
        left = Math.min(left, Math.max(0, config.maxSweepSeconds() - elapsed) + 1);
      }
      progress.pointDone(
          index,
          estimates.length,
          p,
          Duration.ofNanos(System.nanoTime() - start),
          Duration.ofMillis(Math.round(left * 1000)));
    }

    private AttentionPattern buildPattern(int n, double density, long edges) {
      if (density < 1.0) {
        if (edges > Integer.MAX_VALUE - 8) {
          throw new IllegalArgumentException(
              edges + " entries are more than an int-indexed CSR graph holds");
        }
        long needed = RandomPatterns.buildBytes(n, edges);
        if (needed > freeHeap() * 0.6) {
          System.gc();
          if (needed > freeHeap() * 0.6) {
            throw new IllegalArgumentException(
                String.format(
                    Locale.ROOT,
                    "needs about %d MiB of heap to build, %d MiB free (raise -Xmx)",
                    needed >> 20,
                    freeHeap() >> 20));
          }
        }
      }
      return RandomPatterns.uniform(n, density, config.seed() * 1_000_003L + n * 31L + edges);
    }

    private long seedFor(int n, SweepScore score) {
      return config.seed() ^ (0x9E3779B97F4A7C15L * (n * 4L + score.ordinal() + 1));
    }

    /**
     * Times both paths of one point, interleaved. Each path is first checked (kernel, pattern,
     * estimated call time) and called once on its own, so that a path that fails or is too slow is
     * skipped without stopping the other.
     *
     * @return the dense and the sparse outcome
     */
    private Outcome[] runPaths(
        SweepScore score,
        HeadShape shape,
        int n,
        double density,
        long edges,
        AttentionPattern pattern,
        Inputs in,
        String patternProblem) {
      ComputePath[] paths = ComputePath.values();
      Outcome[] outcomes = new Outcome[paths.length];
      List<Integer> ready = new ArrayList<>();
      List<Runnable> calls = new ArrayList<>();
      List<Long> firsts = new ArrayList<>();
      float[][] outs = new float[paths.length][];
      for (int i = 0; i < paths.length; i++) {
        ComputePath path = paths[i];
        AttentionKernel kernel = kernels.get(path);
        if (kernel == null) {
          outcomes[i] =
              skipped(
                  score,
                  n,
                  density,
                  edges,
                  path,
                  "no " + path + " kernel (" + described.get(path) + ")");
          continue;
        }
        if (pattern == null) {
          outcomes[i] = skipped(score, n, density, edges, path, patternProblem);
          continue;
        }
        double estimate = estimateCall(path, shape, score, n, density, edges);
        if (estimate > config.maxCallSeconds()) {
          outcomes[i] =
              skipped(
                  score,
                  n,
                  density,
                  edges,
                  path,
                  String.format(
                      Locale.ROOT,
                      "estimated %.1f s per call, over the %.1f s cap (--max-call-seconds)",
                      estimate,
                      config.maxCallSeconds()));
          continue;
        }
        float[] out;
        try {
          out = new float[in.value.length];
        } catch (OutOfMemoryError e) {
          outcomes[i] = skipped(score, n, density, edges, path, "out of heap memory");
          continue;
        }
        ScoreFunction function = score.function();
        Runnable call =
            () -> kernel.attend(pattern, function, shape, in.query, in.key, in.value, out, null);
        long first;
        try {
          long t0 = System.nanoTime();
          call.run();
          first = System.nanoTime() - t0;
        } catch (MemoryBudgetExceededException e) {
          outcomes[i] =
              skipped(
                  score,
                  n,
                  density,
                  edges,
                  path,
                  "over the dense memory budget: " + e.getMessage());
          continue;
        } catch (OutOfMemoryError e) {
          outcomes[i] = skipped(score, n, density, edges, path, "out of memory: " + e.getMessage());
          continue;
        } catch (RuntimeException | LinkageError e) {
          outcomes[i] = skipped(score, n, density, edges, path, "kernel failed: " + e);
          continue;
        }
        if (first * 1e-9 > 2 * config.maxCallSeconds()) {
          slowCalls.add(new double[] {path.ordinal(), score.ordinal(), n, edges, first});
          outcomes[i] =
              skipped(
                  score,
                  n,
                  density,
                  edges,
                  path,
                  String.format(
                      Locale.ROOT,
                      "the first call took %.1f s, over twice the %.1f s cap (--max-call-seconds)",
                      first * 1e-9,
                      config.maxCallSeconds()));
          continue;
        }
        ready.add(i);
        calls.add(call);
        firsts.add(first);
        outs[i] = out;
      }
      if (!ready.isEmpty()) {
        TimingResult[] timings =
            PointTimer.timeInterleaved(
                calls.toArray(new Runnable[0]),
                firsts.stream().mapToLong(Long::longValue).toArray(),
                config.timing());
        for (int r = 0; r < ready.size(); r++) {
          int i = ready.get(r);
          outcomes[i] = measured(score, shape, n, density, edges, paths[i], timings[r], outs[i]);
        }
      }
      return outcomes;
    }

    private Outcome measured(
        SweepScore score,
        HeadShape shape,
        int n,
        double density,
        long edges,
        ComputePath path,
        TimingResult timing,
        float[] out) {
      double check = 0;
      for (float v : out) {
        check += v;
      }
      sink += check;
      String note = Double.isFinite(check) ? "" : "output not finite";
      double seconds = timing.medianNanos() * 1e-9;
      double w = work(path, shape, n, edges);
      double achieved = path == ComputePath.DENSE ? w / seconds / 1e9 : w / seconds / 1e6;
      return new Outcome(
          new SweepPoint(
              score,
              n,
              density,
              edges,
              path,
              timing,
              achieved,
              limitFor(path, n),
              unitFor(path),
              note),
          out);
    }

    private Outcome skipped(
        SweepScore score, int n, double density, long edges, ComputePath path, String why) {
      return skipped(score, n, density, edges, path, limitFor(path, n), unitFor(path), why);
    }

    /**
     * Estimated seconds for one call: the fastest rate (seconds per unit of work: n² dense, E
     * sparse) among the points measured so far on the same path and score with at least 1/64 of
     * this call's work (the largest point's if none), since other work on the machine only ever
     * slows a point; no faster than a first call that was too slow to time; from the path cost
     * model when nothing was measured.
     */
    private double estimateCall(
        ComputePath path, HeadShape shape, SweepScore score, int n, double density, long edges) {
      double target = scaleWork(path, n, edges);
      double rate = Double.NaN; // seconds per unit of work
      double largest = 0;
      double largestRate = Double.NaN;
      for (SweepPoint p : points) {
        if (p.path() != path || p.score() != score || !p.measured()) {
          continue;
        }
        double w = scaleWork(path, p.n(), p.edges());
        double r = p.timing().medianNanos() * 1e-9 / w;
        if (w >= target / 64 && !(r >= rate)) {
          rate = r;
        }
        if (w >= largest) {
          largest = w;
          largestRate = r;
        }
      }
      if (Double.isNaN(rate)) {
        rate = largestRate;
      }
      for (double[] slow : slowCalls) {
        if (slow[0] != path.ordinal() || slow[1] != score.ordinal()) {
          continue;
        }
        double w = scaleWork(path, (int) slow[2], (long) slow[3]);
        if (w <= target) {
          rate = Math.max(Double.isNaN(rate) ? 0 : rate, slow[4] * 1e-9 / w);
        }
      }
      if (Double.isNaN(rate)) {
        return modelCallSeconds(path, shape, score, n, density, edges, costs, config);
      }
      return rate * target;
    }

    private static double scaleWork(ComputePath path, int n, long edges) {
      return path == ComputePath.DENSE ? (double) n * n : Math.max(edges, n);
    }

    private static Outcome skipped(
        SweepScore score,
        int n,
        double density,
        long edges,
        ComputePath path,
        double limit,
        String unit,
        String why) {
      return new Outcome(
          new SweepPoint(
              score, n, density, edges, path, null, Double.NaN, limit, unit, "skipped: " + why),
          null);
    }

    private static long freeHeap() {
      Runtime rt = Runtime.getRuntime();
      return rt.maxMemory() - (rt.totalMemory() - rt.freeMemory());
    }
  }

  /** Norm-wise relative difference ‖a − b‖ / ‖a‖ (0 when both are zero). */
  static double relativeDifference(float[] a, float[] b) {
    double num = 0;
    double den = 0;
    for (int i = 0; i < a.length; i++) {
      double d = (double) a[i] - b[i];
      num += d * d;
      den += (double) a[i] * a[i];
    }
    if (den == 0) {
      return num == 0 ? 0 : Double.POSITIVE_INFINITY;
    }
    return Math.sqrt(num / den);
  }

  /** A point and its output (kept for the cross-check of the two paths); out null if skipped. */
  private record Outcome(SweepPoint point, float[] out) {}

  /** Seeded query, key and value arrays for one node count and shape, uniform in [-1, 1). */
  private record Inputs(float[] query, float[] key, float[] value) {
    static Inputs random(int n, HeadShape shape, long seed) {
      SplittableRandom r = new SplittableRandom(seed);
      return new Inputs(
          fill(new float[n * shape.keyWidth()], r),
          fill(new float[n * shape.keyWidth()], r),
          fill(new float[n * shape.valueWidth()], r));
    }

    private static float[] fill(float[] a, SplittableRandom r) {
      for (int i = 0; i < a.length; i++) {
        a[i] = (float) (r.nextDouble() * 2 - 1);
      }
      return a;
    }
  }
}
