package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import dev.heed.attention.PathCalibration;
import dev.heed.attention.PathCosts;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Fits a path-cost profile to the points of a crossover sweep's CSV ({@code crossover.csv}), and
 * checks the fitted profile's AUTO choices against those points: the way the built-in profile was
 * made from the reference machine's sweep. With {@code --hold-out N}, the points at n = N are left
 * out of the fit and only they are checked, so the figure says how well the model predicts a size
 * it was not fitted to.
 *
 * <pre>
 * java -cp cli/target/heed.jar dev.heed.bench.crossover.SweepFit crossover.csv OUT.json
 *     [--threads T] [--efficiency E] [--hold-out N] [--machine TEXT]
 * </pre>
 *
 * <p>The sweep's shape (4 heads × 16 dims, key width 16 for dot products) is assumed, as the
 * standard sweeps use it. Regimes the sweep does not run keep the built-in coefficients.
 *
 * <p>Thread safety: stateless.
 */
public final class SweepFit {

  private SweepFit() {}

  /**
   * Runs the tool.
   *
   * @param args the CSV, the output file, then options
   * @throws IOException if a file cannot be read or written
   */
  public static void main(String[] args) throws IOException {
    if (args.length < 2) {
      System.err.println(
          "usage: SweepFit crossover.csv OUT.json [--threads T] [--efficiency E] [--hold-out N]"
              + " [--machine TEXT]");
      System.exit(2);
      return;
    }
    Path csv = Path.of(args[0]);
    Path out = Path.of(args[1]);
    int threads = 2;
    double efficiency = PathCosts.builtIn().parallelEfficiency();
    int holdOut = -1;
    String machine = "fitted to " + csv.getFileName();
    for (int i = 2; i + 1 < args.length; i += 2) {
      switch (args[i]) {
        case "--threads" -> threads = Integer.parseInt(args[i + 1]);
        case "--efficiency" -> efficiency = Double.parseDouble(args[i + 1]);
        case "--hold-out" -> holdOut = Integer.parseInt(args[i + 1]);
        case "--machine" -> machine = args[i + 1];
        default -> throw new IllegalArgumentException("unknown option " + args[i]);
      }
    }
    SweepConfig config = SweepConfig.fullSweep().withThreads(threads);
    List<SweepPoint> points = readPoints(csv);
    List<PathCalibration.Measurement> fitOn = new ArrayList<>();
    List<SweepPoint> checkOn = new ArrayList<>();
    for (SweepPoint p : points) {
      boolean held = p.n() == holdOut;
      if (held || holdOut < 0) {
        checkOn.add(p);
      }
      if (!held && p.measured()) {
        fitOn.add(measurement(config, p));
      }
    }
    PathCosts costs =
        PathCalibration.fit(
            fitOn, threads, efficiency, PathCosts.builtIn(), machine, Double.NaN, out.toString());
    costs.write(out);
    System.out.printf(
        Locale.ROOT,
        "fitted to %d points (median relative error %.1f %%)%s; wrote %s%n",
        fitOn.size(),
        costs.fitMedianRelativeError() * 100,
        holdOut < 0 ? "" : ", n=" + holdOut + " held out",
        out);
    System.out.print(AutoCheck.of(config, checkOn, costs).describe());
  }

  /** The measurement behind a timed point. */
  static PathCalibration.Measurement measurement(SweepConfig config, SweepPoint p) {
    return new PathCalibration.Measurement(
        p.path(),
        p.n(),
        p.edges(),
        p.density() >= 1.0,
        p.score().function(),
        p.score().shape(config.heads(), config.keyDim(), config.valueDim()),
        p.timing().medianNanos() * 1e-9);
  }

  /**
   * Reads the points of a crossover CSV: score, n, density, edges, path and the median (other
   * timing fields are taken as the median; skipped points have none).
   */
  static List<SweepPoint> readPoints(Path csv) throws IOException {
    List<String> lines = Files.readAllLines(csv, StandardCharsets.UTF_8);
    List<String> header = List.of(lines.get(0).split(","));
    int score = header.indexOf("score");
    int n = header.indexOf("n");
    int density = header.indexOf("density");
    int edges = header.indexOf("edges");
    int path = header.indexOf("path");
    int median = header.indexOf("median_ms");
    if (score < 0 || n < 0 || density < 0 || edges < 0 || path < 0 || median < 0) {
      throw new IOException(csv + ": not a crossover CSV (header " + header + ")");
    }
    List<SweepPoint> points = new ArrayList<>();
    for (String line : lines.subList(1, lines.size())) {
      if (line.isBlank()) {
        continue;
      }
      String[] f = line.split(",", header.size());
      TimingResult t = null;
      if (!f[median].isEmpty()) {
        double ns = Double.parseDouble(f[median]) * 1e6;
        t = new TimingResult(ns, ns, ns, ns, ns, 0, 1, true);
      }
      points.add(
          new SweepPoint(
              SweepScore.fromLabel(f[score]),
              Integer.parseInt(f[n]),
              Double.parseDouble(f[density]),
              Long.parseLong(f[edges]),
              ComputePath.valueOf(f[path].toUpperCase(Locale.ROOT)),
              t,
              Double.NaN,
              Double.NaN,
              "",
              ""));
    }
    return points;
  }
}
