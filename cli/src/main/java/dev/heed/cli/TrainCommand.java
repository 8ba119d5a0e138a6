package dev.heed.cli;

import dev.heed.classify.NodeFeatures;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.DemoTraining;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.NodeIndex;
import dev.heed.model.Activation;
import dev.heed.model.ModelFile;
import dev.heed.train.EpochProgress;
import dev.heed.train.FullBatchTrainer;
import dev.heed.train.TrainingData;
import dev.heed.train.TrainingListener;
import dev.heed.train.TrainingNetwork;
import dev.heed.train.TrainingReport;
import dev.heed.train.TrainingSettings;
import dev.heed.train.attention.AttentionScore;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.layer.GraphAttentionTrainingLayer;
import dev.heed.train.layer.HeadMerge;
import dev.heed.train.layer.PassContext;
import dev.heed.train.layer.TrainingLayer;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.PrintStream;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.TreeSet;
import java.util.concurrent.Callable;
import java.util.function.IntFunction;
import java.util.function.ToIntFunction;
import me.tongfei.progressbar.ConsoleProgressBarConsumer;
import me.tongfei.progressbar.ProgressBar;
import me.tongfei.progressbar.ProgressBarBuilder;
import me.tongfei.progressbar.ProgressBarStyle;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed train}: trains a GAT or GATv2 node classifier and writes a Heed model file. Either
 * {@code --demo} (retrains the bundled payments-network demo model exactly as it was made) or
 * {@code --graph}, {@code --features} and {@code --labels} files. A progress bar runs on stderr;
 * the final report goes to stdout.
 *
 * <p>File formats: the graph is an edge list read by {@link EdgeListFileBuilder} (one {@code
 * source,target} per line; the target attends to the source). Features are either a {@code .npy}
 * float32/float64 array {@code [n, f]} whose row i is node i (then the edge list's ids must be the
 * row numbers {@code 0..n-1}: {@code --index-ids}), or a CSV with a header {@code id,name1,...} and
 * one row per node. Labels are a CSV {@code id,label[,split]} (a first line whose second field is
 * {@code label} is a header); split is {@code train}, {@code validation} or {@code test}. Without a
 * split column, labelled nodes are split {@value #VALIDATION_PERCENT} % validation, the rest
 * training, by the seed.
 */
@Command(
    name = "train",
    mixinStandardHelpOptions = true,
    description =
        "Train a graph-attention node classifier and write a Heed model file (--demo retrains the"
            + " bundled demo model).")
final class TrainCommand implements Callable<Integer> {

  /** Share of labelled nodes held for validation when the labels give no split, in percent. */
  static final int VALIDATION_PERCENT = 20;

  @Spec picocli.CommandLine.Model.CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(
      names = "--demo",
      description = "Retrain the bundled payments-network demo model (ignores the file options).")
  boolean demo;

  @Option(
      names = "--out",
      required = true,
      paramLabel = "FILE",
      description = "Model file to write.")
  Path out;

  @Option(
      names = "--graph",
      paramLabel = "FILE",
      description = "Edge-list file (source,target per line).")
  Path graph;

  @Option(
      names = "--features",
      paramLabel = "FILE",
      description = "Features: .npy [n, f] or CSV id,f1,...")
  Path features;

  @Option(names = "--labels", paramLabel = "FILE", description = "Labels CSV: id,label[,split].")
  Path labels;

  @Option(
      names = "--index-ids",
      description = "Ids in the files are node indices 0..n-1 (needed for .npy features).")
  boolean indexIds;

  @Option(names = "--header", description = "The edge list starts with a header line.")
  boolean header;

  @Option(
      names = "--symmetrise",
      description = "Treat edges as undirected (each end attends to the other).")
  boolean symmetrise;

  @Option(
      names = "--score",
      defaultValue = "gat",
      paramLabel = "gat|gatv2",
      description = "Score function (default: ${DEFAULT-VALUE}).")
  String score;

  @Option(
      names = "--layers",
      defaultValue = "2",
      paramLabel = "N",
      description = "Graph-attention layers, at least 1 (default: ${DEFAULT-VALUE}).")
  int layers;

  @Option(
      names = "--heads",
      defaultValue = "8",
      paramLabel = "N",
      description = "Heads of each hidden layer (default: ${DEFAULT-VALUE}).")
  int heads;

  @Option(
      names = "--head-width",
      defaultValue = "8",
      paramLabel = "N",
      description =
          "Output width of each head of a hidden layer; the model file's head_width (default:"
              + " ${DEFAULT-VALUE}).")
  int headWidth;

  @Option(
      names = "--output-heads",
      defaultValue = "1",
      paramLabel = "N",
      description = "Heads of the output layer, averaged (default: ${DEFAULT-VALUE}).")
  int outputHeads;

  @Option(
      names = "--epochs",
      defaultValue = "200",
      paramLabel = "N",
      description = "Most epochs (default: ${DEFAULT-VALUE}).")
  int epochs;

  @Option(
      names = "--patience",
      defaultValue = "100",
      paramLabel = "N",
      description = "Early-stopping patience in epochs (default: ${DEFAULT-VALUE}).")
  int patience;

  @Option(
      names = "--learning-rate",
      defaultValue = "0.005",
      paramLabel = "RATE",
      description = "Adam learning rate (default: ${DEFAULT-VALUE}).")
  double learningRate;

  @Option(
      names = "--weight-decay",
      defaultValue = "5e-4",
      paramLabel = "RATE",
      description = "L2 weight decay (default: ${DEFAULT-VALUE}).")
  double weightDecay;

  @Option(
      names = "--dropout",
      defaultValue = "0.6",
      paramLabel = "RATE",
      description = "Dropout on inputs and attention weights (default: ${DEFAULT-VALUE}).")
  double dropout;

  @Option(
      names = "--balanced",
      description = "Weigh classes by inverse training frequency (for rare classes).")
  boolean balanced;

  @Option(
      names = "--seed",
      defaultValue = "42",
      paramLabel = "N",
      description = "Seed (default: ${DEFAULT-VALUE}).")
  long seed;

  @Option(names = "--no-progress", description = "No progress bar.")
  boolean noProgress;

  @Override
  public Integer call() throws IOException {
    PrintWriter out = spec.commandLine().getOut();
    if (demo) {
      return trainDemo(out);
    }
    if (graph == null || features == null || labels == null) {
      throw new CliException(
          "train needs --graph, --features and --labels (or --demo to retrain the demo model)",
          HeedCli.EXIT_USER_ERROR);
    }
    return trainFiles(out);
  }

  private int trainDemo(PrintWriter out) throws IOException {
    long started = System.nanoTime();
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    CsrGraph g = DemoGraph.build(payments);
    out.printf(
        Locale.ROOT,
        "demo network: %s; graph %d nodes, %d entries%n",
        payments,
        g.nodeCount(),
        g.entryCount());
    out.flush();
    DemoTraining.Outcome outcome;
    try (Progress progress = new Progress(DemoTraining.MAX_EPOCHS)) {
      outcome =
          DemoTraining.train(
              DemoTraining.gat(payments.featureNames().size()), payments, g, progress);
    }
    outcome.writeModel(this.out);
    out.println("training: " + describe(outcome.report()));
    out.println("held out: " + outcome.test());
    out.printf(
        Locale.ROOT,
        "wrote %s (%d bytes) in %.1f s%n",
        this.out,
        Files.size(this.out),
        (System.nanoTime() - started) / 1e9);
    return 0;
  }

  private int trainFiles(PrintWriter out) throws IOException {
    long started = System.nanoTime();
    checkSettings();
    Graph g = readGraph();
    int n = g.graph.nodeCount();
    FeatureTable table = readFeatures(g, n);
    LabelTable labelTable = readLabels(g, n);
    int classes = labelTable.classes.size();
    if (classes < 2) {
      throw new CliException(
          labels + ": needs at least two distinct labels, got " + labelTable.classes,
          HeedCli.EXIT_USER_ERROR);
    }
    TrainingData data =
        TrainingData.of(
            g.graph,
            table.width,
            table.values,
            classes,
            labelTable.label,
            labelTable.train,
            labelTable.validation);
    if (balanced) {
      data = data.withBalancedClassWeights();
    }
    TrainingNetwork network = network(table.width, classes);
    TrainingSettings settings =
        TrainingSettings.builder()
            .learningRate(learningRate)
            .weightDecay(weightDecay)
            .maxEpochs(epochs)
            .patience(patience)
            .seed(seed)
            .build();
    out.printf(
        Locale.ROOT,
        "graph %d nodes, %d entries; %d features; classes %s; %d train, %d validation, %d test%n",
        n,
        g.graph.entryCount(),
        table.width,
        labelTable.classes,
        labelTable.train.length,
        labelTable.validation.length,
        labelTable.test.length);
    out.flush();
    var kernel = FullBatchTrainer.defaultKernel();
    TrainingReport report;
    try (Progress progress = new Progress(epochs)) {
      report = FullBatchTrainer.withKernel(kernel).train(network, data, settings, progress);
    }
    ModelFile.write(network.toModel(labelTable.classes, table.names), this.out);
    out.println("training: " + describe(report));
    if (labelTable.test.length > 0) {
      double[] logits =
          network.forward(
              data.features(), PassContext.evaluation(g.graph, new KernelAttentionForward(kernel)));
      out.println("held out: " + testScore(logits, classes, labelTable));
    }
    out.printf(
        Locale.ROOT,
        "wrote %s (%d bytes) in %.1f s%n",
        this.out,
        Files.size(this.out),
        (System.nanoTime() - started) / 1e9);
    return 0;
  }

  private void checkSettings() {
    if (layers < 1 || heads < 1 || headWidth < 1 || outputHeads < 1) {
      throw new CliException(
          "--layers, --heads, --head-width and --output-heads must each be at least 1, got "
              + layers
              + ", "
              + heads
              + ", "
              + headWidth
              + ", "
              + outputHeads,
          HeedCli.EXIT_USER_ERROR);
    }
    if (!score.equals("gat") && !score.equals("gatv2")) {
      throw new CliException(
          "--score must be gat or gatv2, got '" + score + "'", HeedCli.EXIT_USER_ERROR);
    }
  }

  /**
   * Hidden layers: heads x head width, ELU, concatenated; output: averaged heads, one per class.
   */
  private TrainingNetwork network(int featureCount, int classes) {
    AttentionScore.Kind kind =
        score.equals("gatv2") ? AttentionScore.Kind.GATV2 : AttentionScore.Kind.ADDITIVE;
    List<TrainingLayer> list = new ArrayList<>();
    int width = featureCount;
    for (int l = 0; l < layers - 1; l++) {
      list.add(
          GraphAttentionTrainingLayer.builder(width, heads, headWidth)
              .score(kind)
              .activation(Activation.ELU)
              .inputDropout(dropout)
              .attentionDropout(dropout)
              .build());
      width = heads * headWidth;
    }
    list.add(
        GraphAttentionTrainingLayer.builder(width, outputHeads, classes)
            .score(kind)
            .headMerge(HeadMerge.MEAN)
            .activation(Activation.IDENTITY)
            .inputDropout(dropout)
            .attentionDropout(dropout)
            .build());
    return TrainingNetwork.of(list);
  }

  /** The graph and how ids in the other files find its nodes (-1: not in the graph). */
  private record Graph(CsrGraph graph, ToIntFunction<String> lookup, IntFunction<String> idOf) {}

  private Graph readGraph() throws IOException {
    DirectionPolicy direction = symmetrise ? DirectionPolicy.SYMMETRISE : DirectionPolicy.KEEP;
    if (indexIds) {
      EdgeListResult<Long> r =
          EdgeListFileBuilder.indexIds(graph).header(header).direction(direction).build();
      NodeIndex<Long> nodes = r.nodes();
      return new Graph(
          r.graph(),
          token -> {
            try {
              return nodes.indexOf(Long.parseLong(token));
            } catch (NumberFormatException e) {
              return -1;
            }
          },
          i -> String.valueOf(nodes.idOf(i)));
    }
    EdgeListResult<String> r =
        EdgeListFileBuilder.stringIds(graph).header(header).direction(direction).build();
    NodeIndex<String> nodes = r.nodes();
    return new Graph(r.graph(), nodes::indexOf, nodes::idOf);
  }

  private static int nodeOf(Graph g, String token) {
    return g.lookup.applyAsInt(token);
  }

  private record FeatureTable(int width, float[] values, List<String> names) {}

  private FeatureTable readFeatures(Graph g, int n) throws IOException {
    if (features.getFileName().toString().endsWith(".npy")) {
      if (!indexIds) {
        throw new CliException(
            features
                + ": .npy features are matched to nodes by row number, so the edge list's ids must"
                + " be row numbers: add --index-ids, or give the features as CSV id,f1,...",
            HeedCli.EXIT_USER_ERROR);
      }
      NodeFeatures f = NodeFeatures.readNpy(features);
      if (f.nodeCount() != n) {
        throw new CliException(
            features + ": has " + f.nodeCount() + " rows but the graph has " + n + " nodes",
            HeedCli.EXIT_USER_ERROR);
      }
      float[] values = new float[n * f.featureCount()];
      for (int i = 0; i < n; i++) {
        for (int k = 0; k < f.featureCount(); k++) {
          values[i * f.featureCount() + k] = f.value(i, k);
        }
      }
      return new FeatureTable(f.featureCount(), values, List.of());
    }
    try (BufferedReader in = Files.newBufferedReader(features, StandardCharsets.UTF_8)) {
      String head = in.readLine();
      if (head == null) {
        throw userError(features, 1, "empty file; expected a header id,name1,...");
      }
      String[] names = head.split(",", -1);
      int width = names.length - 1;
      if (width < 1) {
        throw userError(features, 1, "the header needs an id column and at least one feature");
      }
      float[] values = new float[n * width];
      boolean[] seen = new boolean[n];
      String line;
      int lineNo = 1;
      while ((line = in.readLine()) != null) {
        lineNo++;
        if (line.isBlank() || line.startsWith("#")) {
          continue;
        }
        String[] f = line.split(",", -1);
        if (f.length != width + 1) {
          throw userError(features, lineNo, f.length + " fields, expected " + (width + 1));
        }
        int node = nodeOf(g, f[0].trim());
        if (node < 0) {
          throw userError(features, lineNo, "id '" + f[0].trim() + "' is not in the graph");
        }
        if (seen[node]) {
          throw userError(features, lineNo, "id '" + f[0].trim() + "' appears twice");
        }
        seen[node] = true;
        for (int k = 0; k < width; k++) {
          try {
            values[node * width + k] = Float.parseFloat(f[k + 1].trim());
          } catch (NumberFormatException e) {
            throw userError(
                features,
                lineNo,
                "feature '" + names[k + 1] + "' is '" + f[k + 1] + "', not a number");
          }
        }
      }
      for (int i = 0; i < n; i++) {
        if (!seen[i]) {
          throw new CliException(
              features + ": no features for node '" + g.idOf.apply(i) + "' of the graph",
              HeedCli.EXIT_USER_ERROR);
        }
      }
      List<String> featureNames = new ArrayList<>();
      for (int k = 1; k < names.length; k++) {
        featureNames.add(names[k].trim());
      }
      return new FeatureTable(width, values, featureNames);
    }
  }

  private record LabelTable(
      List<String> classes, int[] label, int[] train, int[] validation, int[] test) {}

  private LabelTable readLabels(Graph g, int n) throws IOException {
    List<String[]> rows = new ArrayList<>();
    List<Integer> lines = new ArrayList<>();
    try (BufferedReader in = Files.newBufferedReader(labels, StandardCharsets.UTF_8)) {
      String line;
      int lineNo = 0;
      while ((line = in.readLine()) != null) {
        lineNo++;
        if (line.isBlank() || line.startsWith("#")) {
          continue;
        }
        String[] f = line.split(",", -1);
        if (rows.isEmpty()
            && lines.isEmpty()
            && f.length >= 2
            && f[1].trim().equalsIgnoreCase("label")) {
          lines.add(-lineNo); // header
          continue;
        }
        if (f.length != 2 && f.length != 3) {
          throw userError(labels, lineNo, f.length + " fields, expected id,label[,split]");
        }
        rows.add(f);
        lines.add(lineNo);
      }
    }
    if (!lines.isEmpty() && lines.get(0) < 0) {
      lines.remove(0);
    }
    TreeSet<String> classSet = new TreeSet<>();
    for (String[] f : rows) {
      classSet.add(f[1].trim());
    }
    List<String> classes = List.copyOf(classSet);
    int[] label = new int[n];
    Arrays.fill(label, -1);
    List<Integer> train = new ArrayList<>();
    List<Integer> validation = new ArrayList<>();
    List<Integer> test = new ArrayList<>();
    List<Integer> unsplit = new ArrayList<>();
    for (int r = 0; r < rows.size(); r++) {
      String[] f = rows.get(r);
      int lineNo = lines.get(r);
      int node = nodeOf(g, f[0].trim());
      if (node < 0) {
        throw userError(labels, lineNo, "id '" + f[0].trim() + "' is not in the graph");
      }
      if (label[node] >= 0) {
        throw userError(labels, lineNo, "id '" + f[0].trim() + "' is labelled twice");
      }
      label[node] = classes.indexOf(f[1].trim());
      String split = f.length == 3 ? f[2].trim().toLowerCase(Locale.ROOT) : "";
      switch (split) {
        case "train" -> train.add(node);
        case "validation" -> validation.add(node);
        case "test" -> test.add(node);
        case "" -> unsplit.add(node);
        default ->
            throw userError(
                labels, lineNo, "split '" + f[2].trim() + "'; expected train, validation or test");
      }
    }
    // labelled nodes without a split: VALIDATION_PERCENT % validation, the rest training, by seed
    SplittableRandom random = new SplittableRandom(seed);
    for (int node : unsplit) {
      (random.nextInt(100) < VALIDATION_PERCENT ? validation : train).add(node);
    }
    if (train.isEmpty()) {
      throw new CliException(labels + ": no training nodes", HeedCli.EXIT_USER_ERROR);
    }
    return new LabelTable(classes, label, ints(train), ints(validation), ints(test));
  }

  private static int[] ints(List<Integer> list) {
    return list.stream().mapToInt(Integer::intValue).toArray();
  }

  private static String testScore(double[] logits, int classes, LabelTable t) {
    int[] count = new int[classes];
    int[] hit = new int[classes];
    int correct = 0;
    for (int node : t.test) {
      int best = 0;
      for (int c = 1; c < classes; c++) {
        if (logits[node * classes + c] > logits[node * classes + best]) {
          best = c;
        }
      }
      count[t.label[node]]++;
      if (best == t.label[node]) {
        hit[t.label[node]]++;
        correct++;
      }
    }
    StringBuilder b =
        new StringBuilder(
            String.format(
                Locale.ROOT,
                "test split: %d nodes, accuracy %.4f; recall",
                t.test.length,
                (double) correct / t.test.length));
    for (int c = 0; c < classes; c++) {
      b.append(
          String.format(
              Locale.ROOT,
              "%s %s %s (%d)",
              c == 0 ? "" : ",",
              t.classes.get(c),
              count[c] == 0
                  ? "n/a"
                  : String.format(Locale.ROOT, "%.4f", (double) hit[c] / count[c]),
              count[c]));
    }
    return b.toString();
  }

  private static String describe(TrainingReport r) {
    return String.format(
        Locale.ROOT,
        "%d epochs (kept epoch %d%s), training loss %.4f accuracy %.4f, validation loss %.4f"
            + " accuracy %.4f, %.1f s",
        r.epochs(),
        r.bestEpoch(),
        r.stoppedEarly() ? ", stopped early" : "",
        r.trainingLoss(),
        r.trainingAccuracy(),
        r.validationLoss(),
        r.validationAccuracy(),
        r.seconds());
  }

  private static CliException userError(Path file, int line, String problem) {
    return new CliException(file + ":" + line + ": " + problem, HeedCli.EXIT_USER_ERROR);
  }

  /** The progress bar on stderr, fed by the trainer's listener. */
  private final class Progress implements TrainingListener, AutoCloseable {
    private final ProgressBar bar;

    Progress(int maxEpochs) {
      PrintStream err = System.err;
      this.bar =
          noProgress
              ? null
              : new ProgressBarBuilder()
                  .setTaskName("train")
                  .setInitialMax(maxEpochs)
                  .setStyle(ProgressBarStyle.ASCII)
                  .setUnit(" epochs", 1)
                  .setConsumer(new ConsoleProgressBarConsumer(err))
                  .build();
    }

    @Override
    public void onEpoch(EpochProgress p) {
      if (bar != null) {
        bar.stepTo(p.epoch());
        bar.setExtraMessage(
            String.format(Locale.ROOT, "loss %.4f val acc %.4f", p.loss(), p.validationAccuracy()));
      }
    }

    @Override
    public void close() {
      if (bar != null) {
        bar.close();
      }
    }
  }
}
