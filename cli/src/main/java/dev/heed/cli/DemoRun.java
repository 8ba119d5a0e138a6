package dev.heed.cli;

import dev.heed.attention.PathCosts;
import dev.heed.classify.Classification;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.DemoFiles;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.model.AttentionModel;
import dev.heed.model.Layer;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Comparator;
import java.util.List;
import java.util.Locale;

/**
 * {@code heed classify --demo}: prepares the demo files, classifies them through {@link
 * ClassifyRun} like any other files, and reports accuracy on the held-out (test split) accounts,
 * recall per role and three explained predictions.
 */
final class DemoRun {

  /** Class-path location of the bundled demo model. */
  static final String MODEL_RESOURCE = "/dev/heed/demo/payments-demo.heed";

  /** The label whose predictions the demo explains. */
  static final String EXPLAINED_LABEL = "mule-ring";

  static final String CAUTION =
      "Caution: these are model scores on invented data, not decisions about anyone; a score is"
          + " a reason to look closer, never a verdict.";

  private static final int EXPLAINED = 3;

  private final PrintWriter out;
  private final PrintWriter err;

  DemoRun(PrintWriter out, PrintWriter err) {
    this.out = out;
    this.err = err;
  }

  int run(
      Path directory,
      Path modelFile,
      PathCosts pathCosts,
      PathChoice path,
      Integer threads,
      int explainK,
      Path predictionsOut,
      ClassifyOutputOptions output,
      long start)
      throws IOException {
    Named loaded = model(modelFile);
    Named named =
        new Named(ClassifyCommand.withPathCosts(loaded.model(), pathCosts), loaded.name());
    AttentionModel model = named.model();
    String modelName = named.name();
    output.checkReportClass(model.classLabels());
    long prepareStart = System.nanoTime();
    DemoFiles files = files(directory);
    double prepareSeconds = (System.nanoTime() - prepareStart) / 1e9;
    ClassifyRun run = load(named, files, threads);
    ClassifyCommand.warnIfDenseIsCostly(path, run.graph().nodeCount(), err);
    long classifyStart = System.nanoTime();
    Classification all = run.classify(null, path, 0);
    double classifySeconds = (System.nanoTime() - classifyStart) / 1e9;
    if (predictionsOut != null) {
      output.writePredictions(run, all, 0, predictionsOut, out);
    }
    run.printSummary(all, classifySeconds, (System.nanoTime() - start) / 1e9, err);
    output.writeReport(
        run, all, null, path, modelName, files.transfers().getFileName().toString(), err);

    List<String> labels = run.model().classLabels();
    int n = run.graph().nodeCount();
    int[] truth = new int[n];
    boolean[] test = new boolean[n];
    readRoles(files.roles(), run, labels, truth, test);

    out.printf(
        Locale.ROOT,
        "Heed demo: an invented payments network (synthetic data): %,d accounts, %,d transfers%n",
        n,
        run.edgeLines());
    out.printf(
        Locale.ROOT,
        "  files: %s (%s)%n",
        files.directory(),
        files.generated()
            ? String.format(Locale.ROOT, "generated in %.1f s", prepareSeconds)
            : "reused after checking them against their manifest");
    out.printf(Locale.ROOT, "  model: %s: %s; labels %s%n", modelName, layers(model), labels);
    out.println();

    int[] total = new int[labels.size()];
    int[] correct = new int[labels.size()];
    int testCount = 0;
    int right = 0;
    for (NodePrediction p : all.predictions()) {
      int node = p.node();
      if (!test[node] || truth[node] < 0) {
        continue;
      }
      testCount++;
      total[truth[node]]++;
      if (p.labelIndex() == truth[node]) {
        right++;
        correct[truth[node]]++;
      }
    }
    out.printf(
        Locale.ROOT,
        "Held-out accounts (test split, labels never used in training): %,d%n",
        testCount);
    out.printf(
        Locale.ROOT,
        "  accuracy  %.3f%n",
        testCount == 0 ? Double.NaN : (double) right / testCount);
    StringBuilder recall = new StringBuilder("  recall   ");
    for (int c = 0; c < labels.size(); c++) {
      recall.append(
          String.format(
              Locale.ROOT,
              "  %s %.3f (of %,d)",
              labels.get(c),
              total[c] == 0 ? Double.NaN : (double) correct[c] / total[c],
              total[c]));
    }
    out.println(recall);
    out.println();

    int explainedLabel =
        labels.contains(EXPLAINED_LABEL) ? labels.indexOf(EXPLAINED_LABEL) : labels.size() - 1;
    int[] picked =
        all.predictions().stream()
            .filter(p -> test[p.node()] && p.labelIndex() == explainedLabel)
            .sorted(
                Comparator.comparingDouble((NodePrediction p) -> -p.probability())
                    .thenComparingInt(NodePrediction::node))
            .limit(EXPLAINED)
            .mapToInt(NodePrediction::node)
            .toArray();
    if (picked.length == 0) {
      out.printf("No held-out account was scored %s.%n", labels.get(explainedLabel));
    } else {
      out.printf(
          Locale.ROOT,
          "The %d held-out accounts scored highest as %s, with the %d accounts the last attention"
              + " layer weighted most (mean over heads):%n",
          picked.length,
          labels.get(explainedLabel),
          explainK);
      Classification explained = run.classify(picked, path, explainK);
      for (NodePrediction p : explained.predictions()) {
        out.printf(
            Locale.ROOT,
            "  %-12s %s %.3f  (true role: %s)%n",
            run.nodes().idOf(p.node()),
            p.label(),
            p.probability(),
            roleName(labels, truth[p.node()]));
        for (NeighbourWeight w : ClassifyRun.lastLayerNeighbours(p)) {
          out.printf(
              Locale.ROOT,
              "      %-12s weight %.3f  (%s%s)%n",
              run.nodes().idOf(w.node()),
              w.weight(),
              w.node() == p.node() ? "itself, " : "",
              roleName(labels, truth[w.node()]));
        }
      }
    }
    out.println();
    out.println(CAUTION);
    out.flush();
    return 0;
  }

  /** A model and the name the summaries give it. */
  record Named(AttentionModel model, String name) {}

  /** The model of {@code --model}, or the bundled demo model when it is null. */
  static Named model(Path modelFile) throws IOException {
    if (modelFile != null) {
      ClassifyRun.requireFile(modelFile, "--model");
      return new Named(ModelFile.read(modelFile), modelFile.getFileName().toString());
    }
    return new Named(
        bundledModel(), "bundled " + MODEL_RESOURCE.substring(MODEL_RESOURCE.lastIndexOf('/') + 1));
  }

  /** Reads the demo network's files for a model, as any graph and features files are read. */
  static ClassifyRun load(Named model, DemoFiles files, Integer threads) throws IOException {
    return ClassifyRun.load(
        model.model(),
        model.name(),
        files.transfers(),
        files.features(),
        null,
        GraphFileOptions.demo(),
        threads,
        ProgressDisplay.off());
  }

  /** The demo files in {@code directory} (default: the user's cache), made on first use. */
  static DemoFiles files(Path directory) {
    Path dir = directory != null ? directory : DemoFiles.defaultDirectory();
    try {
      return DemoFiles.prepare(dir);
    } catch (IOException e) {
      throw new CliException(
          "cannot prepare the demo files in " + dir + ": " + e + "; choose another --demo-dir",
          HeedCli.EXIT_USER_ERROR);
    }
  }

  /** The bundled demo model, for tests that compare with it. */
  static AttentionModel bundledModelForTests() throws IOException {
    return bundledModel();
  }

  private static AttentionModel bundledModel() throws IOException {
    try (InputStream in = DemoRun.class.getResourceAsStream(MODEL_RESOURCE)) {
      if (in == null) {
        throw new CliException(
            "this build has no demo model (class-path resource "
                + MODEL_RESOURCE
                + "); pass one with --model FILE",
            HeedCli.EXIT_USER_ERROR);
      }
      return ModelFile.read(in, MODEL_RESOURCE, NpyLimits.defaults());
    }
  }

  /** Reads roles.csv ("account,role,split") into per-node label indices and test flags. */
  private static void readRoles(
      Path file, ClassifyRun run, List<String> labels, int[] truth, boolean[] test)
      throws IOException {
    Arrays.fill(truth, -1);
    long line = 0;
    try (BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
      for (String text = in.readLine(); text != null; text = in.readLine()) {
        line++;
        if (line == 1) {
          continue;
        }
        List<String> f = TextFields.split(text, ',');
        if (f.size() != 3) {
          throw new CliException(
              file + ", line " + line + ": expected account,role,split", HeedCli.EXIT_USER_ERROR);
        }
        int node = run.nodes().indexOf(f.get(0));
        if (node < 0) {
          continue; // an account without transfers is not in the graph
        }
        truth[node] = labels.indexOf(f.get(1));
        test[node] = f.get(2).equals(PaymentsNetwork.Split.TEST.name().toLowerCase(Locale.ROOT));
      }
    }
  }

  private static String roleName(List<String> labels, int role) {
    return role < 0 ? "role not among the model's labels" : labels.get(role);
  }

  private static String layers(AttentionModel model) {
    List<String> parts = new ArrayList<>();
    for (Layer layer : model.layers()) {
      parts.add(
          layer.kind()
              + (layer.attentionHeads() > 0
                  ? " ("
                      + layer.attentionHeads()
                      + (layer.attentionHeads() == 1 ? " head)" : " heads)")
                  : ""));
    }
    return String.join(" -> ", parts);
  }
}
