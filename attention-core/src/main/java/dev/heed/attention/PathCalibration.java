package dev.heed.attention;

import dev.heed.attention.internal.CostRegime;
import dev.heed.attention.internal.CostRegime.CallSize;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.Instant;
import java.time.temporal.ChronoUnit;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.EnumMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;
import java.util.SplittableRandom;
import java.util.function.Consumer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Fits the path cost model ({@link PathCosts}) to the machine it runs on: times a fixed set of
 * about 30 small attention calls that exercise every regime of both kernels (found through {@link
 * AttentionKernels#forPath}), then fits each regime's coefficients to them. Takes about 5–10 s on 2
 * cores; save the result with {@link PathCosts#write} (to {@link PathCosts#defaultLocation()} for
 * {@link PathCosts#current()} to find it), or run {@code heed calibrate}.
 *
 * <p>Method: seeded uniform random graphs with the same number of sources per row, seeded inputs in
 * [-1, 1). Every call is first run until three in a row agree within 10 % (at most 6 calls); then
 * every call is timed once per round, round after round ({@value #ROUNDS} rounds), so that a burst
 * of other work on the machine touches all calls alike rather than a few; each timing follows one
 * untimed call of the same kind, and calls shorter than 0.5 ms are repeated within one timing. Each
 * call's time is the fastest of its rounds. The parallel efficiency comes from one sparse call
 * timed on one thread and on all of them. A regime whose kernel is missing (no dense module) keeps
 * the built-in coefficients.
 *
 * <p>Thread safety: stateless; calibrate on an otherwise idle machine (other work makes the
 * coefficients, and so AUTO's choices, reflect a slower machine).
 */
public final class PathCalibration {

  private static final Logger LOG = LoggerFactory.getLogger(PathCalibration.class);

  /** Rounds of timed calls; the fastest is taken. */
  static final int ROUNDS = 5;

  private static final long MIN_SAMPLE_NANOS = 500_000;

  private PathCalibration() {}

  /**
   * Calibrates the cost model with the given kernel options.
   *
   * @param options kernel options; the profile records {@code options.threads()}
   * @param progress receives one line per phase (not per call); may be null
   * @return the fitted profile, whose {@link PathCosts#source()} is {@code "calibration"}
   * @throws IllegalStateException if no sparse kernel is on the class path
   */
  public static PathCosts run(KernelOptions options, Consumer<String> progress) {
    Objects.requireNonNull(options, "options");
    Consumer<String> say = progress == null ? s -> {} : progress;
    long start = System.nanoTime();
    int threads = options.threads();
    Map<ComputePath, AttentionKernel> kernels = new EnumMap<>(ComputePath.class);
    for (ComputePath path : ComputePath.values()) {
      try {
        kernels.put(path, AttentionKernels.forPath(path, options));
      } catch (IllegalStateException missing) {
        say.accept(
            path + " kernel missing (" + missing.getMessage() + "): its costs stay built-in");
      }
    }
    if (!kernels.containsKey(ComputePath.SPARSE)) {
      throw new IllegalStateException(
          "calibration needs the sparse kernel (dev.heed:attention-sparse) on the class path");
    }
    List<Call> calls = new ArrayList<>();
    for (Spec spec : specs()) {
      AttentionKernel k = kernels.get(spec.path);
      if (k != null) {
        calls.add(new Call(spec, k));
      }
    }
    Call oneThread = null;
    if (threads > 1) {
      oneThread =
          new Call(
              threadSpec(), AttentionKernels.forPath(ComputePath.SPARSE, options.withThreads(1)));
      calls.add(oneThread);
    }
    say.accept(
        String.format(Locale.ROOT, "calibrating on %d threads: %d calls", threads, calls.size()));
    for (Call c : calls) {
      c.warmUp();
    }
    say.accept(
        String.format(
            Locale.ROOT,
            "warmed up in %.1f s; timing %d rounds",
            (System.nanoTime() - start) * 1e-9,
            ROUNDS));
    for (int r = 0; r < ROUNDS; r++) {
      for (Call c : calls) {
        c.timeOnce(r);
      }
    }
    double efficiency = PathCosts.builtIn().parallelEfficiency();
    if (oneThread != null) {
      Call all = null;
      for (Call c : calls) {
        if (c != oneThread && c.spec.equals(threadSpec())) {
          all = c;
        }
      }
      assert all != null;
      double speedUp = oneThread.seconds() / all.seconds();
      int used =
          CostRegime.of(ComputePath.SPARSE, all.spec.size(threads))
              .threadsUsed(all.spec.size(threads));
      efficiency = Math.max(0.05, Math.min(1, (speedUp - 1) / Math.max(1, used - 1)));
      calls.remove(oneThread);
    }
    List<Measurement> measured = new ArrayList<>();
    for (Call c : calls) {
      Spec spec = c.spec;
      CallSize size = spec.size(threads);
      measured.add(
          new Measurement(
              spec.path,
              spec.n,
              size.entries(),
              size.complete(),
              spec.function(),
              spec.shape,
              c.seconds()));
    }
    double seconds = (System.nanoTime() - start) * 1e-9;
    PathCosts costs =
        fit(measured, threads, efficiency, PathCosts.builtIn(), machine(), seconds, "calibration");
    say.accept(
        String.format(
            Locale.ROOT,
            "fitted %d regimes to %d calls in %.1f s: median relative error %.1f %%, parallel"
                + " efficiency %.2f",
            CostRegime.values().length,
            measured.size(),
            seconds,
            costs.fitMedianRelativeError() * 100,
            efficiency));
    return costs;
  }

  /**
   * One measured attention call, for {@link #fit}.
   *
   * @param path the path it ran on
   * @param nodes n
   * @param entries E (n² for the complete pattern)
   * @param complete whether the pattern was the complete one
   * @param score the score function
   * @param shape heads and widths
   * @param seconds its time, positive
   */
  public record Measurement(
      ComputePath path,
      int nodes,
      long entries,
      boolean complete,
      ScoreFunction score,
      HeadShape shape,
      double seconds) {

    /**
     * Checks the values.
     *
     * @throws IllegalArgumentException if seconds is not positive and finite
     * @throws NullPointerException if path, score or shape is null
     */
    public Measurement {
      Objects.requireNonNull(path, "path");
      Objects.requireNonNull(score, "score");
      Objects.requireNonNull(shape, "shape");
      if (!(seconds > 0 && seconds < Double.POSITIVE_INFINITY)) {
        throw new IllegalArgumentException("seconds must be positive and finite, got " + seconds);
      }
    }
  }

  /**
   * Fits a profile to calls measured elsewhere (for example the points of a crossover sweep): each
   * regime with measurements gets coefficients fitted to them, the others keep {@code prior}'s.
   *
   * @param measurements the calls (not modified)
   * @param threads the threads they ran with, at least 1
   * @param parallelEfficiency e in {@code [0, 1]}
   * @param prior the coefficients to start from and fall back to
   * @param machine a description of the machine
   * @param seconds how long measuring took, or NaN
   * @param source the new profile's {@link PathCosts#source()}
   * @return the fitted profile, with its median relative error over {@code measurements}
   */
  public static PathCosts fit(
      List<Measurement> measurements,
      int threads,
      double parallelEfficiency,
      PathCosts prior,
      String machine,
      double seconds,
      String source) {
    Map<CostRegime, double[]> fitted = new EnumMap<>(CostRegime.class);
    for (CostRegime regime : CostRegime.values()) {
      List<double[]> rows = new ArrayList<>();
      List<Double> times = new ArrayList<>();
      for (Measurement m : measurements) {
        CallSize size = size(m, threads);
        if (CostRegime.of(m.path(), size) == regime) {
          rows.add(regime.features(size, parallelEfficiency));
          times.add(m.seconds());
        }
      }
      fitted.put(
          regime,
          rows.isEmpty()
              ? prior.coefficients(regime)
              : CostFit.fit(
                  rows.toArray(new double[0][]),
                  times.stream().mapToDouble(Double::doubleValue).toArray(),
                  prior.coefficients(regime)));
    }
    PathCosts costs =
        new PathCosts(fitted, threads, parallelEfficiency, machine, now(), null, source);
    double[] errors = new double[measurements.size()];
    for (int i = 0; i < errors.length; i++) {
      Measurement m = measurements.get(i);
      errors[i] = Math.abs(costs.seconds(m.path(), size(m, threads)) / m.seconds() - 1);
    }
    if (LOG.isDebugEnabled()) {
      for (Measurement m : measurements) {
        CallSize size = size(m, threads);
        LOG.debug(
            "{} {} n={} entries={} {} {}: measured {} ms, fitted {} ms",
            m.path(),
            CostRegime.of(m.path(), size).key(),
            m.nodes(),
            m.entries(),
            m.score(),
            m.shape(),
            String.format(Locale.ROOT, "%.3f", m.seconds() * 1e3),
            String.format(Locale.ROOT, "%.3f", costs.seconds(m.path(), size) * 1e3));
      }
    }
    Arrays.sort(errors);
    double medianError = errors.length == 0 ? Double.NaN : errors[errors.length / 2];
    return new PathCosts(
        fitted,
        threads,
        parallelEfficiency,
        machine,
        now(),
        new PathCosts.Fit(measurements.size(), medianError, seconds),
        source);
  }

  private static CallSize size(Measurement m, int threads) {
    return new CallSize(m.nodes(), m.entries(), m.complete(), m.score(), m.shape(), threads);
  }

  private static String now() {
    return Instant.now().truncatedTo(ChronoUnit.SECONDS).toString();
  }

  /** CPU model (Linux), processors, OS and JDK. */
  static String machine() {
    String cpu = "";
    Path info = Path.of("/proc/cpuinfo");
    if (Files.isReadable(info)) {
      try {
        for (String line : Files.readAllLines(info, StandardCharsets.UTF_8)) {
          if (line.startsWith("model name")) {
            cpu = line.substring(line.indexOf(':') + 1).trim() + ", ";
            break;
          }
        }
      } catch (IOException | RuntimeException e) {
        cpu = "";
      }
    }
    return cpu
        + Runtime.getRuntime().availableProcessors()
        + " processors, "
        + System.getProperty("os.name")
        + " "
        + System.getProperty("os.arch")
        + ", Java "
        + System.getProperty("java.version");
  }

  // ---------------------------------------------------------------------------------------------

  private static final HeadShape DOT_4X16 = new HeadShape(4, 16, 16);
  private static final HeadShape DOT_4X4 = new HeadShape(4, 4, 4);
  private static final HeadShape ADD_4X16 = new HeadShape(4, 1, 16);
  private static final HeadShape ADD_4X64 = new HeadShape(4, 1, 64);
  private static final HeadShape ADD_8X8 = new HeadShape(8, 1, 8);

  /** One calibration call: path, score kind, shape, n and sources per row (0: complete). */
  record Spec(ComputePath path, char score, HeadShape shape, int n, int degree) {
    ScoreFunction function() {
      return switch (score) {
        case 'a' -> ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
        case 'g' -> ScoreFunction.gatv2(0.2f, gatv2Attention(shape));
        default -> ScoreFunction.scaledDotProduct();
      };
    }

    CallSize size(int threads) {
      boolean complete = degree == 0;
      long entries = complete ? (long) n * n : (long) n * degree;
      return new CallSize(n, entries, complete, function(), shape, threads);
    }
  }

  private static float[] gatv2Attention(HeadShape shape) {
    float[] a = new float[shape.heads() * shape.keyDim()];
    SplittableRandom r = new SplittableRandom(7);
    for (int i = 0; i < a.length; i++) {
      a[i] = (float) (r.nextDouble() - 0.5);
    }
    return a;
  }

  private static Spec threadSpec() {
    return new Spec(ComputePath.SPARSE, 'd', DOT_4X16, 4096, 128);
  }

  /** The calls: every term of every regime varies across them. */
  static List<Spec> specs() {
    ComputePath d = ComputePath.DENSE;
    ComputePath s = ComputePath.SPARSE;
    return List.of(
        // dense: fixed, products (dk+dv) of small and large calls, per-element work, mask, GATv2
        // scores
        new Spec(d, 'd', DOT_4X16, 256, 0),
        new Spec(d, 'd', DOT_4X16, 512, 0),
        new Spec(d, 'd', DOT_4X4, 512, 64),
        new Spec(d, 'd', DOT_4X16, 1024, 0),
        new Spec(d, 'd', DOT_4X4, 1024, 0),
        new Spec(d, 'a', ADD_4X16, 1024, 0),
        new Spec(d, 'd', DOT_4X16, 1024, 256),
        new Spec(d, 'a', ADD_4X16, 512, 64),
        new Spec(d, 'g', DOT_4X16, 512, 0),
        // large calls whose per-pair costs have settled, and split calls (blocks over the call's
        // own threads)
        new Spec(d, 'd', DOT_4X16, 2048, 0),
        new Spec(d, 'a', ADD_4X16, 2048, 0),
        new Spec(d, 'd', DOT_4X16, 4096, 0),
        new Spec(d, 'a', ADD_4X16, 3072, 0),
        new Spec(d, 'd', DOT_4X4, 3072, 0),
        // sparse per-head, each score: fixed, rows, entries·heads, entries·heads·width (CSR rows
        // and, from the one complete-pattern call, the complete pattern's tiles; the n = 16384
        // calls'
        // tables exceed a second-level cache; for dot products of 4 × 16, rows computed whole and,
        // from the one long-row call, rows taken in blocks)
        new Spec(s, 'd', DOT_4X16, 1024, 8),
        threadSpec(),
        new Spec(s, 'd', DOT_4X4, 2048, 128),
        new Spec(s, 'd', DOT_4X16, 512, 0),
        new Spec(s, 'd', DOT_4X16, 16384, 4),
        new Spec(s, 'd', DOT_4X16, 2048, 1536),
        new Spec(s, 'd', DOT_4X16, 16384, 64),
        new Spec(s, 'a', ADD_4X16, 1024, 8),
        new Spec(s, 'a', ADD_4X16, 4096, 128),
        new Spec(s, 'a', ADD_4X64, 2048, 64),
        new Spec(s, 'a', ADD_4X16, 512, 0),
        new Spec(s, 'a', ADD_4X16, 16384, 4),
        new Spec(s, 'a', ADD_4X16, 16384, 64),
        new Spec(s, 'g', DOT_4X16, 1024, 8),
        new Spec(s, 'g', DOT_4X16, 4096, 64),
        new Spec(s, 'g', DOT_4X16, 512, 0),
        new Spec(s, 'g', DOT_4X16, 16384, 8),
        // sparse all-heads (additive, 8 × 8), in place and over the packed node table
        new Spec(s, 'a', ADD_8X8, 1024, 4),
        new Spec(s, 'a', ADD_8X8, 4096, 64),
        new Spec(s, 'a', ADD_8X8, 16384, 8),
        new Spec(s, 'a', ADD_8X8, 512, 0),
        new Spec(s, 'a', ADD_8X8, 65536, 4),
        new Spec(s, 'a', ADD_8X8, 65536, 24),
        new Spec(s, 'a', ADD_8X8, 131072, 8));
  }

  /** A seeded uniform random CSR graph with {@code degree} distinct sources per row. */
  static CsrGraph uniformGraph(int n, int degree, long seed) {
    if (degree < 1 || degree > n) {
      throw new IllegalArgumentException("degree must be in 1.." + n + ", got " + degree);
    }
    SplittableRandom r = new SplittableRandom(seed);
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * degree];
    boolean[] taken = new boolean[n];
    for (int i = 0; i < n; i++) {
      int base = i * degree;
      for (int t = 0; t < degree; t++) {
        int j;
        do {
          j = r.nextInt(n);
        } while (taken[j]);
        taken[j] = true;
        columns[base + t] = j;
      }
      for (int t = 0; t < degree; t++) {
        taken[columns[base + t]] = false;
      }
      Arrays.sort(columns, base, base + degree);
      offsets[i + 1] = base + degree;
    }
    return CsrGraph.of(offsets, columns);
  }

  /** One call with its pattern, inputs, and timings. */
  private static final class Call {
    final Spec spec;
    final AttentionKernel kernel;
    final AttentionPattern pattern;
    final ScoreFunction function;
    final float[] query;
    final float[] key;
    final float[] value;
    final float[] out;
    final double[] rounds = new double[ROUNDS];
    int repeats = 1;
    double sink;

    Call(Spec spec, AttentionKernel kernel) {
      this.spec = spec;
      this.kernel = kernel;
      long seed = 31L * spec.n + spec.degree * 7L + spec.shape.heads();
      this.pattern =
          spec.degree == 0 ? CompletePattern.of(spec.n) : uniformGraph(spec.n, spec.degree, seed);
      this.function = spec.function();
      SplittableRandom r = new SplittableRandom(seed ^ 0x5DEECE66DL);
      this.query = fill(new float[spec.n * spec.shape.keyWidth()], r);
      this.key = fill(new float[spec.n * spec.shape.keyWidth()], r);
      this.value = fill(new float[spec.n * spec.shape.valueWidth()], r);
      this.out = new float[spec.n * spec.shape.valueWidth()];
    }

    private static float[] fill(float[] a, SplittableRandom r) {
      for (int i = 0; i < a.length; i++) {
        a[i] = (float) (r.nextDouble() * 2 - 1);
      }
      return a;
    }

    long once() {
      long t0 = System.nanoTime();
      kernel.attend(pattern, function, spec.shape, query, key, value, out, null);
      long t = System.nanoTime() - t0;
      sink += out[0];
      return t;
    }

    void warmUp() {
      long[] last = new long[3];
      for (int i = 0; i < 6; i++) {
        last[i % 3] = once();
        if (i >= 2) {
          long max = Math.max(last[0], Math.max(last[1], last[2]));
          long min = Math.min(last[0], Math.min(last[1], last[2]));
          if (max - min <= 0.1 * min) {
            break;
          }
        }
      }
      long typical = Math.max(1, Math.min(last[0], Math.min(last[1], last[2])));
      repeats = (int) Math.max(1, Math.min(64, MIN_SAMPLE_NANOS / typical));
    }

    void timeOnce(int round) {
      // one untimed call first: whatever state the previous call left (the dense path's BLAS
      // thread count, which a small call sets to one and a large one restores at a cost of about
      // 2 ms in its first product; caches) falls on it, not on the timed ones
      once();
      long total = 0;
      for (int i = 0; i < repeats; i++) {
        total += once();
      }
      rounds[round] = total * 1e-9 / repeats;
    }

    double seconds() {
      double[] sorted = rounds.clone();
      Arrays.sort(sorted);
      return sorted[0];
    }
  }
}
