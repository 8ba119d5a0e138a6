package dev.heed.cli;

import dev.heed.attention.PathCosts;
import dev.heed.classify.Classification;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.Optional;
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
      "The graph is an edge-list file (CSV/TSV, RFC 4180 quoting, header optional, one"
          + " 'source,target' per line). Features are matched to nodes by id: a CSV with an id"
          + " column (optional header checked against the model's feature names), an .npz with"
          + " 'features' [n, f] and 'node_ids' [n], or a .npy [n, f] with its ids one per line"
          + " (--feature-ids, or X.ids beside X.npy); a .npy without ids is read as row i = node"
          + " id i, for graphs whose ids are 0..n-1.",
      "With --demo: generate the invented payments network on first use and classify it with"
          + " the bundled demo model (or --model), reporting accuracy on held-out accounts."
    })
final class ClassifyCommand implements Callable<Integer> {

  /**
   * The sparse kernel's plain start (its system property; see {@code CsrKernelVariant} in
   * attention-sparse): a classify run is one pass over a graph in a fresh JVM, so its first 2^25
   * entries × heads (4M entries of 8 heads) run the plain Java loops, which C2 compiles cheaply,
   * instead of Vector API loops that run many times slower until C2 has compiled them. Measured on
   * 2 cores (benchmarks/RESULTS.md, "Start-up"): on the demo, whose first layer is 8M entries ×
   * heads, a run took less CPU and wall time this way; the Vector API loops' warm-up pays off only
   * beyond about this much work. A {@code -Dheed.sparse.plainStart} given to the JVM wins (0 turns
   * it off).
   */
  static final String PLAIN_START_PROPERTY = "heed.sparse.plainStart";

  static final long PLAIN_START_WORK = 1L << 25;

  @Spec CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(names = "--model", paramLabel = "FILE", description = "Model file (.heed).")
  Path model;

  @Option(names = "--graph", paramLabel = "FILE", description = "Edge-list file.")
  Path graph;

  @Mixin FeatureFileOptions featureOptions;

  @Option(
      names = "--node-order",
      paramLabel = "FILE",
      description =
          "Also write the node ids in the order classify used (graph order, then nodes only in"
              + " the features file), one per line: the row order a positional .npy would need.")
  Path nodeOrder;

  @Option(
      names = "--no-progress",
      description =
          "No progress bars (they show on a terminal only, for large inputs, never when output"
              + " is piped).")
  boolean noProgress;

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
      names = "--path-costs",
      paramLabel = "FILE",
      description =
          "Path-cost profile for --path auto (written by heed calibrate; default: -Dheed.path.costs,"
              + " else ~/.heed/path-costs.json if present, else the reference machine's).")
  Path pathCosts;

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
      names = "--override-graph-policies",
      description =
          "Build the graph with the --direction, --self-loops and --duplicates given even where"
              + " they differ from what the model file records about its training graph"
              + " (predictions then differ from what the model was trained for).")
  boolean overrideGraphPolicies;

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
    if (System.getProperty(PLAIN_START_PROPERTY) == null) {
      System.setProperty(PLAIN_START_PROPERTY, Long.toString(PLAIN_START_WORK));
    }
    PathChoice pathChoice = parsePath(path);
    graphOptions.validate();
    if (explain < 0) {
      throw new CliException("--explain must be at least 0, got " + explain, HeedCli.EXIT_USAGE);
    }
    output.validate(nodes != null, out);
    PrintWriter err = spec.commandLine().getErr();
    if (demo) {
      if (graph != null
          || featureOptions.features != null
          || nodes != null
          || featureOptions.featureIds != null) {
        throw new CliException(
            "--demo reads its own graph and features; leave out --graph, --features,"
                + " --feature-ids and --nodes",
            HeedCli.EXIT_USAGE);
      }
      return new DemoRun(spec.commandLine().getOut(), err)
          .run(
              demoDir,
              model,
              pathCostsOrNull(),
              pathChoice,
              threads,
              explain == 0 ? 5 : explain,
              out,
              output,
              start);
    }
    if (demoDir != null) {
      throw new CliException("--demo-dir needs --demo", HeedCli.EXIT_USAGE);
    }
    if (model == null || graph == null || featureOptions.features == null) {
      throw new CliException(
          "classify needs --model, --graph and --features (or --demo); see heed classify --help",
          HeedCli.EXIT_USAGE);
    }
    ClassifyRun.requireFile(model, "--model");
    AttentionModel m = withPathCosts(ModelFile.read(model), pathCostsOrNull());
    Optional<String> conventionsWarning =
        graphOptions.followModel(m.graphPolicies(), overrideGraphPolicies);
    output.checkReportClass(m.classLabels());
    ClassifyRun run =
        ClassifyRun.load(
            m,
            model.getFileName().toString(),
            graph,
            featureOptions.features,
            featureOptions.featureIds,
            graphOptions,
            threads,
            ProgressDisplay.forTerminal(noProgress));
    if (nodeOrder != null) {
      ClassifyOutputOptions.requireDirectoryOf(nodeOrder, "--node-order");
      run.writeNodeOrder(nodeOrder);
    }
    int[] chosen = nodes == null ? null : run.indicesOf(nodes);
    conventionsWarning.ifPresent(err::println); // once the inputs are read without error
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

  /** Reads --path-costs, or returns null when it was not given. */
  private PathCosts pathCostsOrNull() throws IOException {
    if (pathCosts == null) {
      return null;
    }
    ClassifyRun.requireFile(pathCosts, "--path-costs");
    return PathCosts.read(pathCosts);
  }

  /** The model with the profile AUTO uses, if one was given. */
  static AttentionModel withPathCosts(AttentionModel model, PathCosts costs) {
    return costs == null ? model : model.withPathCosts(costs);
  }

  /** Node count above which an explicit dense path gets a note about its n² cost. */
  static final int DENSE_NOTE_MIN_NODES = 4096;

  /** An explicit dense path over a large graph works in n² per head; say so before it starts. */
  static void warnIfDenseIsCostly(PathChoice choice, int nodeCount, PrintWriter err) {
    if (choice == PathChoice.DENSE && nodeCount > DENSE_NOTE_MIN_NODES) {
      err.printf(
          Locale.ROOT,
          "heed: note: --path dense on %,d nodes: the dense path's work grows with n² per head"
              + " whatever the edges, so this may take long; --path auto picks per layer%n",
          nodeCount);
      err.flush();
    }
  }

  /** The {@code --path} value as a path choice. */
  static PathChoice parsePath(String path) {
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
