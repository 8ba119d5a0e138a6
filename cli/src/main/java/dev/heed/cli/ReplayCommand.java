package dev.heed.cli;

import dev.heed.classify.ClassifyOptions;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.Writer;
import java.nio.file.Path;
import java.util.List;
import java.util.Optional;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed replay}: replays a stream of timestamped graph changes against a starting graph,
 * batch by batch, and writes the scores that changed, each exact for the version it reflects.
 */
@Command(
    name = "replay",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    sortOptions = false,
    description = {
      "Replay a stream of graph changes (edges added and removed, nodes added, features set) against"
          + " a starting graph, batch by batch, and write the scores that changed: CSV or JSON"
          + " Lines (stdout or --out); per-batch latency and a summary on stderr.",
      "The starting graph and features are read as heed classify reads them. The stream is a CSV"
          + " file with the header time,kind,source,target[,feature names...]; kinds add-edge,"
          + " remove-edge, add-node, set-features; times in seconds, in order"
          + " (docs/stream-format.md).",
      "With --demo: the bundled demo model over the demo network and its stream, an invented hour"
          + " in which a new mule ring forms."
    })
final class ReplayCommand implements Callable<Integer> {

  /** Default of {@code --window}: one minute. */
  static final double DEFAULT_WINDOW_SECONDS = 60;

  /** Default of {@code --min-change}. */
  static final double DEFAULT_MIN_CHANGE = 0.05;

  @Spec CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(names = "--model", paramLabel = "FILE", description = "Model file (.heed).")
  Path model;

  @Option(names = "--graph", paramLabel = "FILE", description = "Starting edge-list file.")
  Path graph;

  @Mixin FeatureFileOptions featureOptions;

  @Option(
      names = "--stream",
      paramLabel = "FILE",
      description = "The stream of changes (CSV: time,kind,source,target[,features...]).")
  Path stream;

  @Option(
      names = "--window",
      paramLabel = "SECONDS",
      description =
          "One batch per time window of this many seconds (windows start at multiples of it;"
              + " empty windows make no batch). Default: "
              + "60, unless --batch-events is given.")
  Double window;

  @Option(
      names = "--batch-events",
      paramLabel = "N",
      description = "One batch per N events instead of time windows.")
  Integer batchEvents;

  @Option(
      names = "--min-change",
      paramLabel = "P",
      description =
          "Write a node's score when its top label changed or a class probability moved by at"
              + " least P since the score last written for it (or held at the start); 0 writes"
              + " every affected node whose score changed at all. Default: 0.05.")
  Double minChange;

  @Option(
      names = "--out",
      paramLabel = "FILE",
      description = "Write the score changes here instead of stdout.")
  Path out;

  @Option(
      names = "--format",
      paramLabel = "auto|csv|jsonl",
      defaultValue = "auto",
      description =
          "csv: batch,version,time,node,old_label,label,probability,p_LABEL...; jsonl: one"
              + " object per change; auto: jsonl when --out ends in .jsonl or .ndjson, else csv."
              + " Default: ${DEFAULT-VALUE}.")
  String format;

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

  @Option(names = "--no-progress", description = "No progress bar (shown on a terminal only).")
  boolean noProgress;

  @Mixin GraphFileOptions graphOptions;

  @Option(
      names = "--override-graph-policies",
      description =
          "Build the graph with the --direction, --self-loops and --duplicates given even where"
              + " they differ from what the model file records.")
  boolean overrideGraphPolicies;

  @Option(
      names = "--demo",
      description =
          "Replay the demo stream over the demo network with the bundled demo model (or --model)"
              + " and tell when the new ring's accounts were scored mule-ring.")
  boolean demo;

  @Option(
      names = "--demo-dir",
      paramLabel = "DIR",
      description = "Where the demo files are kept (default: ~/.cache/heed/demo-v1).")
  Path demoDir;

  @Override
  public Integer call() throws IOException {
    PathChoice pathChoice = ClassifyCommand.parsePath(path);
    graphOptions.validate();
    Replay.Batching batching = batching();
    double change = minChange == null ? DEFAULT_MIN_CHANGE : minChange;
    if (!(change >= 0 && change <= 1)) {
      throw new CliException(
          "--min-change must be between 0 and 1, got " + minChange, HeedCli.EXIT_USAGE);
    }
    OutputFormat outputFormat = OutputFormat.choose(format, out);
    ClassifyOutputOptions.requireDirectoryOf(out, "--out");
    PrintWriter err = spec.commandLine().getErr();
    PrintWriter stdout = spec.commandLine().getOut();
    if (demo) {
      if (graph != null
          || featureOptions.features != null
          || featureOptions.featureIds != null
          || stream != null) {
        throw new CliException(
            "--demo reads its own graph, features and stream; leave out --graph, --features,"
                + " --feature-ids and --stream",
            HeedCli.EXIT_USAGE);
      }
      return new DemoReplay(stdout, err)
          .run(demoDir, model, pathChoice, threads, batching, change, out, outputFormat);
    }
    if (demoDir != null) {
      throw new CliException("--demo-dir needs --demo", HeedCli.EXIT_USAGE);
    }
    if (model == null || graph == null || featureOptions.features == null || stream == null) {
      throw new CliException(
          "replay needs --model, --graph, --features and --stream (or --demo); see heed replay"
              + " --help",
          HeedCli.EXIT_USAGE);
    }
    ClassifyRun.requireFile(model, "--model");
    ClassifyRun.requireFile(stream, "--stream");
    AttentionModel m = ModelFile.read(model);
    Optional<String> conventionsWarning =
        graphOptions.followModel(m.graphPolicies(), overrideGraphPolicies);
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
    List<StreamFile.Event> events =
        StreamFile.read(stream, run.model().featureNames(), run.model().inputFeatureCount());
    conventionsWarning.ifPresent(err::println);
    Replay replay = replayOf(run, pathChoice, graphOptions);
    Replay.Summary summary;
    if (out == null) {
      summary = replay(replay, events, batching, change, outputFormat, stdout);
    } else {
      try (Writer w = ClassifyOutputOptions.openFile(out, "--out")) {
        summary = replay(replay, events, batching, change, outputFormat, w);
      }
    }
    Replay.printSummary(summary, stream.getFileName().toString(), batching, err);
    return 0;
  }

  private Replay.Summary replay(
      Replay replay,
      List<StreamFile.Event> events,
      Replay.Batching batching,
      double change,
      OutputFormat outputFormat,
      Writer w)
      throws IOException {
    try {
      return replay.run(
          stream,
          events,
          batching,
          change,
          ScoreChangeWriter.of(outputFormat, w),
          ProgressDisplay.forTerminal(noProgress),
          null);
    } finally {
      w.flush();
    }
  }

  static Replay replayOf(ClassifyRun run, PathChoice path, GraphFileOptions options) {
    return new Replay(
        run.model(),
        ClassifyOptions.defaults().withPath(path),
        run.nodes(),
        run.graph(),
        run.features(),
        options.policies());
  }

  private Replay.Batching batching() {
    if (window != null && batchEvents != null) {
      throw new CliException(
          "give --window or --batch-events, not both: a batch is either a time window or a count"
              + " of events",
          HeedCli.EXIT_USAGE);
    }
    if (batchEvents != null) {
      if (batchEvents < 1) {
        throw new CliException(
            "--batch-events must be at least 1, got " + batchEvents, HeedCli.EXIT_USAGE);
      }
      return Replay.Batching.count(batchEvents);
    }
    double seconds = window == null ? DEFAULT_WINDOW_SECONDS : window;
    if (!(seconds > 0) || Double.isInfinite(seconds)) {
      throw new CliException(
          "--window must be a positive number of seconds, got " + window, HeedCli.EXIT_USAGE);
    }
    return Replay.Batching.window(seconds);
  }
}
