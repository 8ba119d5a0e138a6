package dev.heed.cli;

import dev.heed.demo.DemoGraph;
import dev.heed.demo.DemoTraining;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
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
import java.io.IOException;
import java.io.PrintStream;
import java.io.PrintWriter;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.Callable;
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
 * <p>File formats: the graph and features are read exactly as {@code heed classify} reads them
 * ({@link GraphInputs}: the shared {@link GraphFileOptions}, features matched to nodes by id).
 * Labels are a CSV (or TSV) {@code id,label[,split]}, RFC 4180 quoting; a first line whose id is
 * not a node of the graph is a header, whatever it names its columns (say {@code
 * account,role,split}), and the report says so. Split is {@code train}, {@code validation} or
 * {@code test}. Without a split column, labelled nodes are split {@value #VALIDATION_PERCENT} %
 * validation, the rest training, by the seed.
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
      description = "Edge-list file (source,target per line); read as classify reads it.")
  Path graph;

  @Mixin FeatureFileOptions featureOptions;

  @Option(
      names = "--labels",
      paramLabel = "FILE",
      description =
          "Labels CSV: id,label[,split] (split: train, validation or test); header allowed.")
  Path labels;

  @Mixin GraphFileOptions graphOptions;

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
    if (graph == null || featureOptions.features == null || labels == null) {
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
    graphOptions.validate();
    GraphInputs g =
        GraphInputs.read(
            graph,
            featureOptions.features,
            featureOptions.featureIds,
            graphOptions,
            FeatureFiles.Expected.ANY,
            ProgressDisplay.forTerminal(noProgress));
    int n = g.graph().nodeCount();
    int width = g.features().featureCount();
    float[] values = new float[Math.multiplyExact(n, width)];
    for (int i = 0; i < n; i++) {
      g.features().copyRow(i, values, i * width);
    }
    ClassifyRun.requireFile(labels, "--labels");
    LabelFiles.Table labelTable =
        LabelFiles.read(labels, graphOptions.delimiterSetting(), g.nodes(), n, seed);
    int classes = labelTable.classes().size();
    if (classes < 2) {
      throw new CliException(
          labels + ": needs at least two distinct labels, got " + labelTable.classes(),
          HeedCli.EXIT_USER_ERROR);
    }
    TrainingData data =
        TrainingData.of(
            g.graph(),
            width,
            values,
            classes,
            labelTable.label(),
            labelTable.train(),
            labelTable.validation());
    if (balanced) {
      data = data.withBalancedClassWeights();
    }
    TrainingNetwork network = network(width, classes);
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
        "graph %d nodes, %d entries (%s); %d features (%s); classes %s; %d train, %d validation,"
            + " %d test%n",
        n,
        g.graph().entryCount(),
        graphOptions.describePolicies(),
        width,
        g.featuresHow(),
        labelTable.classes(),
        labelTable.train().length,
        labelTable.validation().length,
        labelTable.test().length);
    if (labelTable.header() != null) {
      out.println("labels: line 1 read as a header " + labelTable.header());
    }
    out.flush();
    var kernel = FullBatchTrainer.defaultKernel();
    TrainingReport report;
    try (Progress progress = new Progress(epochs)) {
      report = FullBatchTrainer.withKernel(kernel).train(network, data, settings, progress);
    }
    ModelFile.write(
        network
            .toModel(labelTable.classes(), g.featureNames())
            .withGraphPolicies(graphOptions.policies()),
        this.out);
    out.println("training: " + describe(report));
    if (labelTable.test().length > 0) {
      double[] logits =
          network.forward(
              data.features(),
              PassContext.evaluation(g.graph(), new KernelAttentionForward(kernel)));
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

  private static String testScore(double[] logits, int classes, LabelFiles.Table t) {
    int[] count = new int[classes];
    int[] hit = new int[classes];
    int correct = 0;
    for (int node : t.test()) {
      int best = 0;
      for (int c = 1; c < classes; c++) {
        if (logits[node * classes + c] > logits[node * classes + best]) {
          best = c;
        }
      }
      count[t.label()[node]]++;
      if (best == t.label()[node]) {
        hit[t.label()[node]]++;
        correct++;
      }
    }
    StringBuilder b =
        new StringBuilder(
            String.format(
                Locale.ROOT,
                "test split: %d nodes, accuracy %.4f; recall",
                t.test().length,
                (double) correct / t.test().length));
    for (int c = 0; c < classes; c++) {
      b.append(
          String.format(
              Locale.ROOT,
              "%s %s %s (%d)",
              c == 0 ? "" : ",",
              t.classes().get(c),
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
