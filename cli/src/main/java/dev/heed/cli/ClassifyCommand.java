package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed classify}: classifies the nodes of a graph read from an edge-list file with a model
 * file, or with {@code --demo} runs the bundled payments demo through the same code path.
 */
@Command(
    name = "classify",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    sortOptions = false,
    description = {
      "Classify the nodes of a graph with a model: predictions as CSV or JSON Lines (stdout or"
          + " --out), optionally an HTML report of explained predictions (--report), a summary"
          + " on stderr.",
      "The graph is an edge-list file (CSV/TSV, header optional, one 'source,target' per line);"
          + " features are a CSV with an id column (optional header checked against the model's"
          + " feature names) or a .npy float32 [n, f] in the graph's node order (order of first"
          + " appearance in the edge list).",
      "With --demo: generate the invented payments network on first use and classify it with"
          + " the bundled demo model (or --model), reporting accuracy on held-out accounts."
    })
final class ClassifyCommand implements Callable<Integer> {

  @Spec CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(names = "--model", paramLabel = "FILE", description = "Model file (.heed).")
  Path model;

  @Option(names = "--graph", paramLabel = "FILE", description = "Edge-list file.")
  Path graph;

  @Option(
      names = "--features",
      paramLabel = "FILE",
      description = "Node features: .npy [n, f] in node order, or CSV 'id,f1,...,fn'.")
  Path features;

  @Option(
      names = "--nodes",
      split = ",",
      paramLabel = "ID",
      description =
          "Classify only these nodes (ids as in the files, comma-separated); default all.")
  List<String> nodes;

  @Option(
      names = "--path",
      paramLabel = "auto|dense|sparse",
      defaultValue = "auto",
      description = "Attention kernel per layer. Default: ${DEFAULT-VALUE}.")
  String path;

  @Option(
      names = "--threads",
      paramLabel = "N",
      description = "Kernel threads (default: one per processor).")
  Integer threads;

  @Option(
      names = "--explain",
      paramLabel = "K",
      defaultValue = "0",
      description =
          "Add the K neighbours with the most attention (weights averaged over heads): in CSV"
              + " those of the model's last attention layer, columns neighbour_1,weight_1,...;"
              + " in JSON Lines those of every attention layer.")
  int explain;

  @Option(
      names = "--out",
      paramLabel = "FILE",
      description = "Write the predictions here instead of stdout.")
  Path out;

  @Mixin ClassifyOutputOptions output;

  @Mixin GraphFileOptions graphOptions;

  @Option(
      names = "--demo",
      description =
          "Run the bundled demo: invented payments network, demo model (or --model), accuracy on"
              + " the held-out accounts, three explained predictions (--explain K neighbours"
              + " each, default 5; --out FILE also writes every prediction).")
  boolean demo;

  @Option(
      names = "--demo-dir",
      paramLabel = "DIR",
      description = "Where the demo files are kept (default: ~/.cache/heed/demo-v1).")
  Path demoDir;

  @Override
  public Integer call() throws IOException {
    long start = System.nanoTime();
    PathChoice pathChoice = pathChoice();
    graphOptions.validate();
    if (explain < 0) {
      throw new CliException("--explain must be at least 0, got " + explain, HeedCli.EXIT_USAGE);
    }
    output.validate(nodes != null, out);
    PrintWriter err = spec.commandLine().getErr();
    if (demo) {
      if (graph != null || features != null || nodes != null) {
        throw new CliException(
            "--demo reads its own graph and features; leave out --graph, --features and --nodes",
            HeedCli.EXIT_USAGE);
      }
      return new DemoRun(spec.commandLine().getOut(), err)
          .run(demoDir, model, pathChoice, threads, explain == 0 ? 5 : explain, out, output, start);
    }
    if (demoDir != null) {
      throw new CliException("--demo-dir needs --demo", HeedCli.EXIT_USAGE);
    }
    if (model == null || graph == null || features == null) {
      throw new CliException(
          "classify needs --model, --graph and --features (or --demo); see heed classify --help",
          HeedCli.EXIT_USAGE);
    }
    ClassifyRun.requireFile(model, "--model");
    AttentionModel m = ModelFile.read(model);
    output.checkReportClass(m.classLabels());
    ClassifyRun run =
        ClassifyRun.load(m, model.getFileName().toString(), graph, features, graphOptions, threads);
    int[] chosen = nodes == null ? null : run.indicesOf(nodes);
    warnIfDenseIsCostly(pathChoice, run.graph().nodeCount(), err);
    long classifyStart = System.nanoTime();
    Classification result = run.classify(chosen, pathChoice, explain);
    double classifySeconds = (System.nanoTime() - classifyStart) / 1e9;
    output.writePredictions(run, result, explain, out, spec.commandLine().getOut());
    run.printSummary(result, classifySeconds, (System.nanoTime() - start) / 1e9, err);
    output.writeReport(
        run,
        result,
        chosen,
        pathChoice,
        model.getFileName().toString(),
        graph.getFileName().toString(),
        err);
    return 0;
  }

  /** An explicit dense path over a large graph works in n² per head; say so before it starts. */
  static void warnIfDenseIsCostly(PathChoice choice, int nodeCount, PrintWriter err) {
    if (choice == PathChoice.DENSE && nodeCount > PathChoice.AUTO_DENSE_MAX_NODES) {
      err.printf(
          Locale.ROOT,
          "heed: note: --path dense on %,d nodes: the dense path's work grows with n² per head"
              + " whatever the edges, so this may take long; --path auto picks per layer%n",
          nodeCount);
      err.flush();
    }
  }

  private PathChoice pathChoice() {
    return switch (path.toLowerCase(Locale.ROOT)) {
      case "auto" -> PathChoice.AUTO;
      case "dense" -> PathChoice.DENSE;
      case "sparse" -> PathChoice.SPARSE;
      default ->
          throw new CliException(
              "--path must be auto, dense or sparse, got '" + path + "'", HeedCli.EXIT_USAGE);
    };
  }
}
