package dev.heed.cli;

import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.NodeIndex;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerRun;
import dev.heed.model.PathChoice;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.Optional;

/**
 * The classify code path shared by {@code heed classify} and {@code heed classify --demo}: reads
 * the graph and features once, runs the model and prints a summary (the predictions are written by
 * a {@link PredictionWriter}).
 */
final class ClassifyRun {

  private final AttentionModel model;
  private final String modelName;
  private final Path graphFile;
  private final Path featuresFile;
  private final GraphFileOptions graphOptions;
  private final GraphInputs inputs;
  private final CsrGraph graph;
  private final NodeIndex<String> nodes;
  private final NodeFeatures features;
  private final ProgressDisplay progress;

  private ClassifyRun(
      AttentionModel model,
      String modelName,
      Path graphFile,
      Path featuresFile,
      GraphFileOptions graphOptions,
      GraphInputs inputs,
      ProgressDisplay progress) {
    this.model = model;
    this.modelName = modelName;
    this.graphFile = graphFile;
    this.featuresFile = featuresFile;
    this.graphOptions = graphOptions;
    this.inputs = inputs;
    this.graph = inputs.graph();
    this.nodes = inputs.nodes();
    this.features = inputs.features();
    this.progress = progress;
  }

  /**
   * Reads graph and features for a model; threads null means the kernels' default; featureIds is
   * the {@code --feature-ids} file or null.
   */
  static ClassifyRun load(
      AttentionModel model,
      String modelName,
      Path graphFile,
      Path featuresFile,
      Path featureIds,
      GraphFileOptions graphOptions,
      Integer threads,
      ProgressDisplay progress)
      throws IOException {
    if (threads != null) {
      if (threads < 1) {
        throw new CliException("--threads must be at least 1, got " + threads, HeedCli.EXIT_USAGE);
      }
      model = model.withKernelOptions(KernelOptions.defaults().withThreads(threads));
    }
    FeatureFiles.Expected expected =
        new FeatureFiles.Expected(model.inputFeatureCount(), model.featureNames(), "model");
    GraphInputs inputs =
        GraphInputs.read(graphFile, featuresFile, featureIds, graphOptions, expected, progress);
    return new ClassifyRun(
        model, modelName, graphFile, featuresFile, graphOptions, inputs, progress);
  }

  static void requireFile(Path file, String option) {
    if (!java.nio.file.Files.isRegularFile(file)) {
      throw new CliException(
          option
              + ": "
              + (java.nio.file.Files.exists(file) ? "not a regular file: " : "file not found: ")
              + file,
          HeedCli.EXIT_USER_ERROR);
    }
  }

  NodeIndex<String> nodes() {
    return nodes;
  }

  CsrGraph graph() {
    return graph;
  }

  NodeFeatures features() {
    return features;
  }

  /** The number of edge lines read from the graph file. */
  long edgeLines() {
    return inputs.edgeLines();
  }

  /** Writes the node ids in node order, one per line: the order of the rows classify used. */
  void writeNodeOrder(Path file) throws IOException {
    StringBuilder text = new StringBuilder();
    for (int i = 0; i < nodes.size(); i++) {
      String id = nodes.idOf(i);
      if (id.indexOf('\n') >= 0 || id.indexOf('\r') >= 0) {
        throw new CliException(
            "--node-order: id '" + id + "' holds a line break; the file has one id per line",
            HeedCli.EXIT_USER_ERROR);
      }
      text.append(id.startsWith("\"") || !id.equals(id.strip()) ? TextFields.quoted(id) : id)
          .append('\n');
    }
    java.nio.file.Files.writeString(file, text, java.nio.charset.StandardCharsets.UTF_8);
  }

  AttentionModel model() {
    return model;
  }

  /** Node indices of ids, failing with the unknown ones listed. */
  int[] indicesOf(List<String> ids) {
    int[] indices = new int[ids.size()];
    List<String> unknown = new ArrayList<>();
    int unknownCount = 0;
    for (int i = 0; i < ids.size(); i++) {
      indices[i] = nodes.indexOf(ids.get(i));
      if (indices[i] < 0 && unknownCount++ < 5) {
        unknown.add("'" + ids.get(i) + "'");
      }
    }
    if (unknownCount > 0) {
      throw new CliException(
          "--nodes: "
              + unknownCount
              + (unknownCount == 1 ? " id is" : " ids are")
              + " not in the graph "
              + graphFile
              + ": "
              + String.join(", ", unknown)
              + (unknownCount > unknown.size() ? ", ..." : "")
              + " (ids are matched exactly, as written in the edge list)",
          HeedCli.EXIT_USER_ERROR);
    }
    return indices;
  }

  /** Classifies all nodes (null) or the given ones; explainK 0 means no explanations. */
  Classification classify(int[] nodeIndices, PathChoice path, int explainK) {
    ClassifyOptions options = ClassifyOptions.defaults().withPath(path);
    if (explainK > 0) {
      options = options.withExplanations(explainK);
    }
    NodeClassifier classifier = NodeClassifier.of(model, options);
    ProgressDisplay.Bar bar = progress.open("classify", graph.nodeCount());
    try {
      return nodeIndices == null
          ? classifier.classify(graph, features)
          : classifier.classify(graph, features, nodeIndices);
    } finally {
      bar.close();
    }
  }

  /** The top neighbours of the last attention layer, averaged over heads; empty if none. */
  static List<NeighbourWeight> lastLayerNeighbours(NodePrediction p) {
    List<LayerExplanation> layers = p.explanation().orElse(List.of());
    return layers.isEmpty() ? List.of() : layers.get(layers.size() - 1).topNeighbours();
  }

  /** Prints the summary: sizes, per-layer path and time, totals. */
  void printSummary(
      Classification result, double classifySeconds, double totalSeconds, PrintWriter err) {
    err.printf(
        Locale.ROOT,
        "heed classify: %,d nodes, %,d edges (attention entries; %,d lines of %s, %s)%n",
        graph.nodeCount(),
        graph.entryCount(),
        inputs.edgeLines(),
        graphFile.getFileName(),
        graphOptions.describePolicies());
    if (inputs.edgeless() > 0) {
      err.printf(
          Locale.ROOT,
          "  %,d of the nodes appear only in %s (no edges): they attend to %s%n",
          inputs.edgeless(),
          featuresFile.getFileName(),
          graphOptions.selfLoopPolicy() == dev.heed.graph.SelfLoopPolicy.ADD
              ? "themselves only"
              : "nothing");
    }
    err.printf(
        Locale.ROOT,
        "  features: %d per node from %s (%s); model %s, %d threads%n",
        features.featureCount(),
        featuresFile.getFileName(),
        inputs.featuresHow(),
        modelName,
        model.kernelOptions().threads());
    boolean auto = result.layerRuns().stream().anyMatch(r -> r.estimate().isPresent());
    if (auto) {
      err.printf(Locale.ROOT, "  --path auto: %s%n", model.pathCosts());
    }
    err.printf(
        Locale.ROOT,
        "  %-5s %-20s %-16s %-7s %9s%s%n",
        "layer",
        "name",
        "kind",
        "path",
        "seconds",
        auto ? String.format(Locale.ROOT, " %13s %13s", "dense (pred.)", "sparse (pred.)") : "");
    double layerTotal = 0;
    for (LayerRun run : result.layerRuns()) {
      layerTotal += run.nanos() / 1e9;
      err.printf(
          Locale.ROOT,
          "  %-5d %-20s %-16s %-7s %9.3f%s%n",
          run.layerIndex(),
          run.layerName(),
          run.kind(),
          run.path().map(p -> p.name().toLowerCase(Locale.ROOT)).orElse("-"),
          run.nanos() / 1e9,
          !auto
              ? ""
              : run.estimate()
                  .map(
                      e ->
                          String.format(
                              Locale.ROOT, " %13.4f %13.4f", e.denseSeconds(), e.sparseSeconds()))
                  .orElse(String.format(Locale.ROOT, " %13s %13s", "-", "-")));
    }
    err.printf(
        Locale.ROOT,
        "  total %.3f s: read graph %.3f, read features %.3f, layers %.3f, classify call %.3f%n",
        totalSeconds,
        inputs.graphSeconds(),
        inputs.featureSeconds(),
        layerTotal,
        classifySeconds);
    if (result.layerRuns().stream()
        .anyMatch(
            r ->
                r.path().equals(Optional.of(ComputePath.SPARSE))
                    && r.estimate().map(e -> e.faster() == ComputePath.DENSE).orElse(false))) {
      err.printf(
          Locale.ROOT,
          "  (layers predicted faster on the dense path ran sparse: AUTO charges the dense path"
              + " ND4J's start-up, about 1.5 s, until it has started)%n");
    }
    err.flush();
  }
}
