package dev.heed.cli;

import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.PathCalibration;
import dev.heed.attention.PathCosts;
import dev.heed.attention.ScoreFunction;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed calibrate}: fits the path cost model that {@code --path auto} chooses by to this
 * machine ({@link PathCalibration}) and saves the profile where {@link PathCosts#current()} finds
 * it, or to {@code --out}.
 */
@Command(
    name = "calibrate",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description =
        "Measure both attention paths on this machine (about 10 s; run it on an idle machine) and"
            + " save the path-cost profile that --path auto chooses by.")
final class CalibrateCommand implements Callable<Integer> {

  @Spec picocli.CommandLine.Model.CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(
      names = "--out",
      paramLabel = "FILE",
      description = "Where to save the profile (default: ~/.heed/path-costs.json).")
  Path out;

  @Option(
      names = "--threads",
      paramLabel = "N",
      description = "Kernel threads to calibrate for (default: one per processor).")
  Integer threads;

  @Override
  public Integer call() throws IOException {
    PrintWriter err = spec.commandLine().getErr();
    PrintWriter stdout = spec.commandLine().getOut();
    KernelOptions options = KernelOptions.defaults();
    if (threads != null) {
      if (threads < 1) {
        throw new CliException("--threads must be at least 1, got " + threads, HeedCli.EXIT_USAGE);
      }
      options = options.withThreads(threads);
    }
    double load =
        java.lang.management.ManagementFactory.getOperatingSystemMXBean().getSystemLoadAverage();
    int cores = Runtime.getRuntime().availableProcessors();
    if (load > cores * 0.5) {
      err.printf(
          Locale.ROOT,
          "heed: note: load average %.2f on %d processors: other work slows the calls measured,"
              + " so the profile will describe a slower machine; calibrate again when it is idle%n",
          load,
          cores);
    }
    PathCosts costs =
        PathCalibration.run(
            options,
            line -> {
              err.println("calibrate: " + line);
              err.flush();
            });
    Path file = out != null ? out : PathCosts.defaultLocation();
    costs.write(file);
    stdout.printf(Locale.ROOT, "wrote %s (%s)%n", file, costs.machine());
    stdout.printf(
        Locale.ROOT,
        "calibration %.1f s, fit median relative error %.1f %%, parallel efficiency %.2f%n",
        costs.calibrationSeconds(),
        costs.fitMedianRelativeError() * 100,
        costs.parallelEfficiency());
    stdout.printf(
        Locale.ROOT,
        "predicted crossover (sparse faster below this density), %d threads, 4 heads x 16:%n",
        options.threads());
    ScoreFunction[] scores = {
      ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE), ScoreFunction.scaledDotProduct()
    };
    String[] names = {"additive", "dot-product"};
    for (int s = 0; s < scores.length; s++) {
      HeadShape shape = s == 0 ? new HeadShape(4, 1, 16) : new HeadShape(4, 16, 16);
      StringBuilder line = new StringBuilder(String.format(Locale.ROOT, "  %-12s", names[s]));
      for (int n : new int[] {256, 1024, 4096, 16384}) {
        double d = costs.crossoverDensity(n, scores[s], shape, options.threads());
        line.append(
            String.format(
                Locale.ROOT,
                "  n=%d: %s",
                n,
                d >= 1 ? "all" : String.format(Locale.ROOT, "%.3g %%", d * 100)));
      }
      stdout.println(line);
    }
    if (out != null && !file.equals(PathCosts.defaultLocation())) {
      stdout.printf(
          Locale.ROOT,
          "use it with: heed classify --path-costs %s ..., or -D%s=%s%n",
          file,
          PathCosts.LOCATION_PROPERTY,
          file);
    }
    stdout.flush();
    return 0;
  }
}
