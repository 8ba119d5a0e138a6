package dev.heed.cli;

import dev.heed.classify.Classification;
import java.io.BufferedWriter;
import java.io.IOException;
import java.io.OutputStreamWriter;
import java.io.PrintWriter;
import java.io.Writer;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import picocli.CommandLine.Option;

/** What {@code heed classify} writes besides the CSV default: the predictions' format. */
final class ClassifyOutputOptions {

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

  /**
   * Checks the options before any work: a known format, and that the directory of {@code --out}
   * exists.
   *
   * @param out the {@code --out} file, or null
   * @throws CliException naming the option and how to fix it
   */
  void validate(Path out) {
    OutputFormat.choose(format, null);
    requireDirectory(out, "--out");
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

  /** Opens a UTF-8 file for writing, failing clearly when its directory does not exist. */
  static Writer openFile(Path file, String option) throws IOException {
    requireDirectory(file, option);
    return new BufferedWriter(
        new OutputStreamWriter(Files.newOutputStream(file), StandardCharsets.UTF_8), 1 << 16);
  }

  private static void requireDirectory(Path file, String option) {
    Path parent = file == null ? null : file.toAbsolutePath().getParent();
    if (parent != null && !Files.isDirectory(parent)) {
      throw new CliException(
          option + ": the directory " + parent + " does not exist", HeedCli.EXIT_USER_ERROR);
    }
  }
}
