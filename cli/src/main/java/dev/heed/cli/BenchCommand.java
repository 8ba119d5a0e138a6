package dev.heed.cli;

import dev.heed.bench.crossover.CrossoverReport;
import dev.heed.bench.crossover.CrossoverRunner;
import dev.heed.bench.crossover.KernelFactory;
import dev.heed.bench.crossover.ProgressListener;
import dev.heed.bench.crossover.SweepConfig;
import java.io.IOException;
import java.io.PrintStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/** {@code heed bench}: measurements of this machine; {@code crossover} so far. */
@Command(
    name = "bench",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description = "Measure this machine (see: heed bench crossover --help).",
    subcommands = {BenchCommand.Crossover.class})
final class BenchCommand implements Runnable {

  @Spec CommandSpec spec;

  @Override
  public void run() {
    spec.commandLine().usage(spec.commandLine().getErr());
  }

  /** What {@code heed bench crossover} asks of a sweep; null fields keep the sweep's defaults. */
  record CrossoverSettings(
      boolean quick, Integer threads, List<Integer> nodeCounts, List<Double> densities) {}

  /** The sweep behind {@code heed bench crossover}, kept to one call into path-crossover. */
  interface CrossoverSweep {

    /**
     * Runs the sweep, printing the report on {@code out} and progress on {@code progress}.
     *
     * @return the files written into {@code dir}
     */
    List<Path> run(CrossoverSettings settings, Path dir, PrintStream out, PrintStream progress)
        throws IOException;

    /** The path-crossover module's {@link CrossoverRunner} with the registered kernels. */
    static CrossoverSweep runner() {
      return (settings, dir, out, progress) -> {
        SweepConfig config = settings.quick() ? SweepConfig.quickSweep() : SweepConfig.fullSweep();
        if (settings.threads() != null) {
          config = config.withThreads(settings.threads());
        }
        if (settings.nodeCounts() != null) {
          config = config.withNodeCounts(settings.nodeCounts());
        }
        if (settings.densities() != null) {
          config = config.withDensities(settings.densities());
        }
        ProgressListener listener = ProgressListener.printingTo(progress);
        listener.message(CrossoverReport.AUTHORITY);
        CrossoverReport report =
            CrossoverRunner.run(config, KernelFactory.registered(), null, listener);
        out.print(report.formatText());
        out.flush();
        return CrossoverRunner.writeOutputs(report, dir);
      };
    }
  }

  /** {@code heed bench crossover}. */
  @Command(
      name = "crossover",
      mixinStandardHelpOptions = true,
      versionProvider = HeedCli.Version.class,
      sortOptions = false,
      description = {
        "Sweep node counts and densities on the dense and sparse paths and report, per node count"
            + " and score, the density below which the sparse path is faster on this machine.",
        "Writes crossover.csv, crossover.png and crossover.txt into --out. A guide for PathChoice"
            + " AUTO; the JMH benchmarks are the authority for precise figures."
      })
  static final class Crossover implements Callable<Integer> {

    @Spec CommandSpec spec;

    @Mixin DebugOption debug;

    @Option(
        names = "--quick",
        description =
            "A small sweep, about 10-30 s on 2 idle cores, longer on a busy machine (capped at 140 s).")
    boolean quick;

    @Option(
        names = "--out",
        paramLabel = "DIR",
        defaultValue = CrossoverRunner.DEFAULT_OUT,
        description = "Output folder, created if needed (default: ${DEFAULT-VALUE}).")
    Path out;

    @Option(
        names = "--threads",
        paramLabel = "N",
        description = "Kernel threads (default: one per processor).")
    Integer threads;

    @Option(
        names = "--n",
        split = ",",
        paramLabel = "N",
        description = "Node counts to sweep (default: the sweep's own).")
    List<Integer> nodeCounts;

    @Option(
        names = "--densities",
        split = ",",
        paramLabel = "PERCENT",
        description = "Densities to sweep, in percent of n² (0, 100] (default: the sweep's own).")
    List<Double> densitiesPercent;

    @Override
    public Integer call() throws IOException {
      if (Files.exists(out) && !Files.isDirectory(out)) {
        throw new CliException(
            "--out: " + out + " is a file; give a folder", HeedCli.EXIT_USER_ERROR);
      }
      if (threads != null && threads < 1) {
        throw new CliException("--threads must be at least 1, got " + threads, HeedCli.EXIT_USAGE);
      }
      if (nodeCounts != null) {
        for (int n : nodeCounts) {
          if (n < 1) {
            throw new CliException("--n must be at least 1, got " + n, HeedCli.EXIT_USAGE);
          }
        }
      }
      List<Double> densities = null;
      if (densitiesPercent != null) {
        densities = new ArrayList<>();
        for (double p : densitiesPercent) {
          if (!(p > 0 && p <= 100)) {
            throw new CliException(
                "--densities takes percentages in (0, 100], got " + p, HeedCli.EXIT_USAGE);
          }
          densities.add(p / 100.0);
        }
      }
      PrintStream stdout = new PrintStream(System.out, true, StandardCharsets.UTF_8);
      List<Path> files =
          CrossoverSweep.runner()
              .run(
                  new CrossoverSettings(quick, threads, nodeCounts, densities),
                  out,
                  stdout,
                  System.err);
      for (Path f : files) {
        stdout.println("wrote " + f);
      }
      stdout.flush();
      return 0;
    }
  }
}
