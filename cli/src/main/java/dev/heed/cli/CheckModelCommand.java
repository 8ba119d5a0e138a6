package dev.heed.cli;

import dev.heed.model.AttentionModel;
import dev.heed.model.CheckVectors;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.Locale;
import java.util.concurrent.Callable;
import java.util.function.Supplier;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Model.CommandSpec;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed check-model}: runs a model over the check vectors its file carries (inputs with the
 * probabilities its exporter computed, {@code docs/model-format.md}) and prints the largest
 * deviation on the float64 reference (the check loading makes) and on each kernel path. Exits
 * {@link HeedCli#EXIT_VERIFY_FAILED} if a deviation exceeds the file's tolerance; a model without
 * check vectors is reported as such, with exit code 0.
 */
@Command(
    name = "check-model",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description =
        "Run a model over the check vectors in its file and print the largest deviation from the"
            + " expected probabilities, on the float64 reference and on each kernel path; non-zero"
            + " exit if one exceeds the file's tolerance.")
final class CheckModelCommand implements Callable<Integer> {

  @Spec CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(names = "--model", paramLabel = "FILE", required = true, description = "Model file.")
  Path model;

  @Override
  public Integer call() throws IOException {
    ClassifyRun.requireFile(model, "--model");
    AttentionModel m = ModelFile.readUnverified(model, NpyLimits.defaults());
    PrintWriter out = spec.commandLine().getOut();
    out.printf("model: %s%n", model);
    if (m.checks().isEmpty()) {
      out.println(
          "check vectors: none; nothing to compare (docs/export_model.py and heed train write"
              + " them, see docs/model-format.md)");
      out.flush();
      return 0;
    }
    CheckVectors checks = m.checks().get();
    out.println(describe(checks));
    out.printf("%n%-10s %12s  %-6s %s%n", "run", "largest dev", "result", "where");
    CheckVectors.Deviation reference =
        row(out, m, "reference", () -> checks.compareWithReference(m));
    CheckVectors.Deviation sparse =
        row(out, m, "sparse", () -> checks.compare(m, PathChoice.SPARSE));
    CheckVectors.Deviation dense = row(out, m, "dense", () -> checks.compare(m, PathChoice.DENSE));
    out.flush();
    for (CheckVectors.Deviation d : new CheckVectors.Deviation[] {reference, sparse, dense}) {
      if (d != null && !d.withinTolerance()) {
        throw new CliException(
            model
                + ": the model does not reproduce its check vectors (largest deviation "
                + d.describe(m.classLabels().get(d.classIndex()))
                + String.format(Locale.ROOT, ", tolerance %.1e", d.tolerance())
                + "); "
                + (reference.withinTolerance()
                    ? "the float64 reference does, so suspect that kernel"
                    : "a weight in the wrong layout is the likely cause, such as a square weight"
                        + " stored [out, in] where Heed reads [in, out]: see docs/model-format.md,"
                        + " \"Weight layout\""),
            HeedCli.EXIT_VERIFY_FAILED);
      }
    }
    return 0;
  }

  /** One line describing a model's check vectors, shared with {@code heed inspect}. */
  static String describe(CheckVectors checks) {
    return String.format(
        Locale.ROOT,
        "check vectors: %d nodes, %d entries, tolerance %.1e%s",
        checks.nodeCount(),
        checks.graph().entryCount(),
        checks.tolerance(),
        checks.computedBy().isEmpty() ? "" : "; expected values from " + checks.computedBy());
  }

  /** Prints one run's deviation; null (and a note) if that path's kernel is not available. */
  private static CheckVectors.Deviation row(
      PrintWriter out, AttentionModel m, String name, Supplier<CheckVectors.Deviation> run) {
    CheckVectors.Deviation d;
    try {
      d = run.get();
    } catch (IllegalStateException missing) {
      out.printf("%-10s %12s  %-6s %s%n", name, "-", "-", missing.getMessage());
      return null;
    }
    out.printf(
        Locale.ROOT,
        "%-10s %12.2e  %-6s %s%n",
        name,
        d.largest(),
        d.withinTolerance() ? "ok" : "FAILED",
        d.describe(m.classLabels().get(d.classIndex())).replaceFirst("^\\S+ ", ""));
    return d;
  }
}
