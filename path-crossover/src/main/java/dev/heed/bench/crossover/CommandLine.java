package dev.heed.bench.crossover;

import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;

/** The crossover runner's command-line arguments; package-private. */
record CommandLine(SweepConfig config, Path out, boolean help) {

  static final String USAGE =
      String.join(
          "\n",
          "usage: java -cp cli/target/heed.jar dev.heed.bench.crossover.CrossoverRunner [options]",
          "  --quick                 small sweep, about 10-30 s on 2 idle cores (capped at 140 s)",
          "  --out DIR               output folder (default " + CrossoverRunner.DEFAULT_OUT + ")",
          "  --threads N             kernel threads (default: all processors)",
          "  --seed S                seed for graphs and inputs",
          "  --n A,B,...             node counts (default 256,1024,4096,16384; quick 512,2048)",
          "  --densities P,Q,...     densities in percent (default 0.1,0.3,1,3,10,30,100)",
          "  --scores LIST           additive,dot-product (default both)",
          "  --max-call-seconds X    skip points whose call is estimated to take longer",
          "  --dense-budget-mib M    dense kernel scratch budget (default 512)",
          "  --max-sweep-seconds X   skip the points left after X seconds (quick: 140; 0: none)",
          "  --no-relaunch           do not re-launch the JVM to add jdk.incubator.vector",
          "  --help                  this text");

  static CommandLine parse(String[] args) {
    boolean quick = List.of(args).contains("--quick");
    SweepConfig config = quick ? SweepConfig.quickSweep() : SweepConfig.fullSweep();
    Path out = Path.of(CrossoverRunner.DEFAULT_OUT);
    boolean help = false;
    for (int i = 0; i < args.length; i++) {
      String a = args[i];
      switch (a) {
        case "--quick", "--no-relaunch" -> {}
        case "--help", "-h" -> help = true;
        case "--out" -> out = Path.of(value(args, ++i, a));
        case "--threads" -> config = config.withThreads(intValue(args, ++i, a));
        case "--seed" -> config = config.withSeed(longValue(args, ++i, a));
        case "--n" -> {
          List<Integer> ns = new ArrayList<>();
          for (String s : value(args, ++i, a).split(",")) {
            ns.add(parseInt(s.trim(), a));
          }
          config = config.withNodeCounts(ns);
        }
        case "--densities" -> {
          List<Double> ds = new ArrayList<>();
          for (String s : value(args, ++i, a).split(",")) {
            double percent = parseDouble(s.trim().replace("%", ""), a);
            if (!(percent > 0 && percent <= 100)) {
              throw new IllegalArgumentException(
                  "--densities takes percentages in (0, 100], got " + s.trim());
            }
            ds.add(percent / 100.0);
          }
          config = config.withDensities(ds);
        }
        case "--scores" -> {
          List<SweepScore> ss = new ArrayList<>();
          for (String s : value(args, ++i, a).split(",")) {
            ss.add(SweepScore.fromLabel(s.trim()));
          }
          config = config.withScores(ss);
        }
        case "--max-call-seconds" ->
            config = config.withMaxCallSeconds(parseDouble(value(args, ++i, a), a));
        case "--max-sweep-seconds" ->
            config = config.withMaxSweepSeconds(parseDouble(value(args, ++i, a), a));
        case "--dense-budget-mib" ->
            config = config.withDenseMemoryBudgetBytes(longValue(args, ++i, a) << 20);
        default -> throw new IllegalArgumentException("unknown argument '" + a + "' (see --help)");
      }
    }
    return new CommandLine(config, out, help);
  }

  private static String value(String[] args, int i, String option) {
    if (i >= args.length) {
      throw new IllegalArgumentException(option + " needs a value");
    }
    return args[i];
  }

  private static int intValue(String[] args, int i, String option) {
    return parseInt(value(args, i, option), option);
  }

  private static long longValue(String[] args, int i, String option) {
    String v = value(args, i, option);
    try {
      return Long.parseLong(v);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException(option + " needs a whole number, got '" + v + "'", e);
    }
  }

  private static int parseInt(String v, String option) {
    try {
      return Integer.parseInt(v);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException(option + " needs whole numbers, got '" + v + "'", e);
    }
  }

  private static double parseDouble(String v, String option) {
    try {
      return Double.parseDouble(v);
    } catch (NumberFormatException e) {
      throw new IllegalArgumentException(option + " needs numbers, got '" + v + "'", e);
    }
  }
}
