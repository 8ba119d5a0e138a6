package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.model.PathChoice;
import java.io.BufferedWriter;
import java.io.IOException;
import java.io.OutputStreamWriter;
import java.io.PrintWriter;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import picocli.CommandLine.Option;

/**
 * What {@code heed classify} writes besides the CSV default: the predictions' format ({@code
 * --format}) and the HTML report of explained predictions ({@code --report} and its settings).
 */
final class ClassifyOutputOptions {

  /** Default of {@code --report-top}: nodes in a report chosen by score. */
  static final int DEFAULT_REPORT_TOP = 20;

  /** Most nodes one report shows: a longer page is hard to read (use --out for every node). */
  static final int MAX_REPORT_NODES = 500;

  /** Default of {@code --report-neighbours}: attended nodes drawn per node. */
  static final int DEFAULT_REPORT_NEIGHBOURS = 12;

  /** Most attended nodes drawn per node: more do not fit on one circle legibly. */
  static final int MAX_REPORT_NEIGHBOURS = 40;

  @Option(
      names = "--format",
      paramLabel = "auto|csv|jsonl",
      defaultValue = "auto",
      description =
          "Predictions format. csv: node,label,probability, then p_LABEL per class label (model"
              + " order), then neighbour_k,weight_k with --explain K. jsonl: one JSON object per"
              + " node and line (node, label, probability, probabilities by label, and with"
              + " --explain K the top K neighbours of every attention layer). auto: jsonl when"
              + " --out ends in .jsonl or .ndjson, else csv. Default: ${DEFAULT-VALUE}.")
  String format;

  @Option(
      names = "--report",
      paramLabel = "FILE",
      description =
          "Also write a self-contained HTML page (no network needed) explaining chosen nodes: the"
              + " nodes of --nodes, or the --report-top nodes scored highest for --report-class."
              + " Each shows its class probabilities and the nodes the last attention layer"
              + " weighted most (mean over heads), drawn as a graph.")
  Path report;

  @Option(
      names = "--report-class",
      paramLabel = "LABEL",
      description =
          "The class the report ranks nodes by and highlights (default: the model's last class"
              + " label).")
  String reportClass;

  @Option(
      names = "--report-top",
      paramLabel = "N",
      description =
          "Without --nodes, the report shows the N nodes with the highest probability of"
              + " --report-class (ties: earlier node first); default "
              + DEFAULT_REPORT_TOP
              + ", at most "
              + MAX_REPORT_NODES
              + ".")
  Integer reportTop;

  @Option(
      names = "--report-neighbours",
      paramLabel = "K",
      description =
          "Attended nodes drawn per node in the report, heaviest first; default "
              + DEFAULT_REPORT_NEIGHBOURS
              + ", at most "
              + MAX_REPORT_NEIGHBOURS
              + ".")
  Integer reportNeighbours;

  /**
   * Checks the options that need no model, before any work: values in range, report settings only
   * with {@code --report}, {@code --report-top} only without {@code --nodes}, and that the
   * directories of {@code --out} and {@code --report} exist.
   *
   * @param nodesGiven whether {@code --nodes} was given
   * @param out the {@code --out} file, or null
   * @throws CliException naming the option and how to fix it
   */
  void validate(boolean nodesGiven, Path out) {
    OutputFormat.choose(format, null);
    requireDirectoryOf(out, "--out");
    requireDirectoryOf(report, "--report");
    requireReport("--report-class", reportClass);
    requireReport("--report-top", reportTop);
    requireReport("--report-neighbours", reportNeighbours);
    if (reportTop != null && nodesGiven) {
      throw new CliException(
          "--report-top chooses the report's nodes by score; with --nodes the report shows those"
              + " nodes: leave out one of them",
          HeedCli.EXIT_USAGE);
    }
    requireRange("--report-top", reportTop(), MAX_REPORT_NODES);
    requireRange("--report-neighbours", reportNeighbours(), MAX_REPORT_NEIGHBOURS);
  }

  private void requireReport(String option, Object value) {
    if (value != null && report == null) {
      throw new CliException(option + " needs --report FILE", HeedCli.EXIT_USAGE);
    }
  }

  static void requireDirectoryOf(Path file, String option) {
    Path parent = file == null ? null : file.toAbsolutePath().getParent();
    if (parent != null && !Files.isDirectory(parent)) {
      throw new CliException(
          option + ": the directory " + parent + " does not exist", HeedCli.EXIT_USER_ERROR);
    }
  }

  private static void requireRange(String option, int value, int max) {
    if (value < 1 || value > max) {
      throw new CliException(
          option + " must be between 1 and " + max + ", got " + value, HeedCli.EXIT_USAGE);
    }
  }

  int reportTop() {
    return reportTop == null ? DEFAULT_REPORT_TOP : reportTop;
  }

  int reportNeighbours() {
    return reportNeighbours == null ? DEFAULT_REPORT_NEIGHBOURS : reportNeighbours;
  }

  /** Fails early, before any file is read, when {@code --report-class} is not a model label. */
  void checkReportClass(List<String> labels) {
    if (report != null) {
      reportClassIndex(labels);
    }
  }

  /**
   * The index of {@code --report-class} among the model's labels (matched exactly), or the last
   * label's when it is not given.
   *
   * @throws CliException (user error) when the label is not one of the model's
   */
  int reportClassIndex(List<String> labels) {
    if (reportClass == null) {
      return labels.size() - 1;
    }
    int index = labels.indexOf(reportClass);
    if (index < 0) {
      throw new CliException(
          "--report-class: '"
              + reportClass
              + "' is not one of the model's class labels "
              + labels
              + " (labels are matched exactly)",
          HeedCli.EXIT_USER_ERROR);
    }
    return index;
  }

  /**
   * Writes the predictions in the chosen format to {@code file}, or to {@code stdout} when file is
   * null.
   */
  void writePredictions(
      ClassifyRun run, Classification result, int explainK, Path file, PrintWriter stdout)
      throws IOException {
    PredictionWriter writer =
        PredictionWriter.of(OutputFormat.choose(format, file), run.nodes(), explainK);
    if (file == null) {
      writer.write(result, stdout);
      return;
    }
    try (Writer w = openFile(file, "--out")) {
      writer.write(result, w);
    }
  }

  /**
   * Builds and writes the HTML report when {@code --report} was given; says where on {@code err}.
   *
   * @param ranking predictions of every node when {@code chosen} is null (the report ranks them)
   * @param chosen the {@code --nodes} indices, or null
   */
  void writeReport(
      ClassifyRun run,
      Classification ranking,
      int[] chosen,
      PathChoice path,
      String modelName,
      String graphName,
      PrintWriter err)
      throws IOException {
    if (report == null) {
      return;
    }
    ExplanationReport page =
        ExplanationReport.build(
            run,
            ranking,
            chosen,
            reportClassIndex(run.model().classLabels()),
            reportTop(),
            reportNeighbours(),
            path,
            modelName,
            graphName);
    try (Writer w = openFile(report, "--report")) {
      HtmlReport.write(page, w);
    }
    err.printf(
        Locale.ROOT,
        "  report: %d explained %s in %s%n",
        page.cards().size(),
        page.cards().size() == 1 ? "node" : "nodes",
        report);
    err.flush();
  }

  /** Opens a UTF-8 file for writing, failing clearly when its directory does not exist. */
  static Writer openFile(Path file, String option) throws IOException {
    requireDirectoryOf(file, option);
    return new BufferedWriter(
        new OutputStreamWriter(Files.newOutputStream(file), StandardCharsets.UTF_8), 1 << 16);
  }
}
