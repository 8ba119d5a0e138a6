package dev.heed.model;

import dev.heed.attention.KernelOptions;
import dev.heed.attention.PathCosts;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.NeighbourRows;
import java.util.HashSet;
import java.util.List;
import java.util.Objects;
import java.util.Optional;
import java.util.Set;

/**
 * An immutable stack of layers with its input feature count and class labels, loaded from a model
 * file ({@link ModelFile#read}) or stacked from layers built in Java ({@link #of}, then {@link
 * ModelFile#write} saves it). {@link #forward} maps an n × {@link #inputFeatureCount()} feature
 * matrix over a graph to n × {@link #classLabels()}.size() class probabilities.
 *
 * <p>Thread safety: immutable. One model may serve any number of threads at once: a call keeps all
 * its intermediate arrays to itself and only reads the weights; the kernels it uses are immutable
 * and shared (each is created once per model and path, on first use).
 *
 * <p>Kernels come from {@link dev.heed.attention.AttentionKernels#forPath} with the model's {@link
 * KernelOptions} ({@link KernelOptions#defaults()} unless {@link #withKernelOptions} says
 * otherwise).
 */
public final class AttentionModel {

  static {
    dev.heed.internal.model.ModelSteps.install(new StepAccess());
  }

  private final int inputFeatureCount;
  private final List<String> featureNames;
  private final List<String> classLabels;
  private final List<Layer> layers;
  private final KernelOptions kernelOptions;
  private final KernelSource kernels;
  private final GraphPolicies graphPolicies; // null: not recorded
  private final CheckVectors checks; // null: none
  private final PathCosts pathCosts; // null: PathCosts.current()

  AttentionModel(
      int inputFeatureCount,
      List<String> featureNames,
      List<String> classLabels,
      List<Layer> layers,
      KernelOptions kernelOptions,
      KernelSource kernels,
      GraphPolicies graphPolicies,
      CheckVectors checks,
      PathCosts pathCosts) {
    this.inputFeatureCount = inputFeatureCount;
    this.featureNames = List.copyOf(featureNames);
    this.classLabels = List.copyOf(classLabels);
    this.layers = List.copyOf(layers);
    this.kernelOptions = kernelOptions;
    this.kernels = kernels;
    this.graphPolicies = graphPolicies;
    this.checks = checks;
    this.pathCosts = pathCosts;
  }

  /**
   * Stacks layers into a model, with the checks reading a model file applies to the stack. The
   * input feature count is the first layer's input width. The model's kernels use {@link
   * KernelOptions#defaults()}.
   *
   * <pre>{@code
   * AttentionModel model = AttentionModel.of(
   *     List.of(hidden, output, SoftmaxLayer.of("probabilities", 3)),
   *     List.of("ordinary", "merchant", "mule-ring"),
   *     featureNames);
   * ModelFile.write(model, Path.of("payments.heed"));
   * }</pre>
   *
   * @param layers the layers in the order they run: names distinct, each layer's input width the
   *     previous layer's output width, the last (and only the last) a {@link SoftmaxLayer}
   * @param classLabels distinct labels, one per output of the last layer
   * @param featureNames one name per input feature, or an empty list for none
   * @return the model
   * @throws IllegalArgumentException if the stack does not fit together (the message names the
   *     layer) or a label or name count disagrees with it
   */
  public static AttentionModel of(
      List<Layer> layers, List<String> classLabels, List<String> featureNames) {
    List<Layer> stack = List.copyOf(layers);
    List<String> labels = List.copyOf(classLabels);
    List<String> names = List.copyOf(featureNames);
    if (stack.isEmpty()) {
      throw new IllegalArgumentException("a model needs at least one layer, the last a softmax");
    }
    Set<String> layerNames = new HashSet<>();
    for (int i = 0; i < stack.size(); i++) {
      Layer layer = stack.get(i);
      if (!layerNames.add(layer.name())) {
        throw new IllegalArgumentException(
            "layer " + i + ": duplicate layer name '" + layer.name() + "'");
      }
      if (i > 0 && layer.inputWidth() != stack.get(i - 1).outputWidth()) {
        throw new IllegalArgumentException(
            "layer "
                + i
                + " '"
                + layer.name()
                + "' reads "
                + layer.inputWidth()
                + " features per node but layer "
                + (i - 1)
                + " '"
                + stack.get(i - 1).name()
                + "' writes "
                + stack.get(i - 1).outputWidth());
      }
      if (layer instanceof SoftmaxLayer && i != stack.size() - 1) {
        throw new IllegalArgumentException(
            "layer " + i + " '" + layer.name() + "': a softmax layer must be the last layer");
      }
    }
    Layer last = stack.get(stack.size() - 1);
    if (!(last instanceof SoftmaxLayer)) {
      throw new IllegalArgumentException(
          "the last layer ('"
              + last.name()
              + "', "
              + last.kind()
              + ") must be a softmax layer, the classification head");
    }
    if (labels.isEmpty()) {
      throw new IllegalArgumentException("at least one class label is needed");
    }
    Set<String> seen = new HashSet<>();
    for (int i = 0; i < labels.size(); i++) {
      if (!seen.add(labels.get(i))) {
        throw new IllegalArgumentException(
            "class label " + i + " repeats '" + labels.get(i) + "'; labels must be distinct");
      }
    }
    if (last.outputWidth() != labels.size()) {
      throw new IllegalArgumentException(
          "the model ends with "
              + last.outputWidth()
              + " outputs per node but there are "
              + labels.size()
              + " class labels");
    }
    int inputs = stack.get(0).inputWidth();
    if (!names.isEmpty() && names.size() != inputs) {
      throw new IllegalArgumentException(
          names.size() + " feature names were given but the first layer reads " + inputs);
    }
    KernelOptions options = KernelOptions.defaults();
    return new AttentionModel(
        inputs,
        names,
        labels,
        stack,
        options,
        KernelSource.fromClassPath(options),
        null,
        null,
        null);
  }

  /**
   * Returns the number of features each node must have.
   *
   * @return the input width
   */
  public int inputFeatureCount() {
    return inputFeatureCount;
  }

  /**
   * Returns the names of the input features, or an empty list if the file gave none.
   *
   * @return an unmodifiable list of {@link #inputFeatureCount()} names, or empty
   */
  public List<String> featureNames() {
    return featureNames;
  }

  /**
   * Returns the class labels; output (probability) c belongs to label c.
   *
   * @return an unmodifiable list, at least one label
   */
  public List<String> classLabels() {
    return classLabels;
  }

  /**
   * Returns the layers in the order they run; the last is a {@link SoftmaxLayer}.
   *
   * @return an unmodifiable list
   */
  public List<Layer> layers() {
    return layers;
  }

  /**
   * Returns how the model's training graph was built from its edge list, if the model records it.
   * Classify with a graph built the same way: the command line does so by default and refuses other
   * conventions unless told to override them.
   *
   * @return the recorded conventions, or empty for a model that does not record them
   */
  public Optional<GraphPolicies> graphPolicies() {
    return Optional.ofNullable(graphPolicies);
  }

  /**
   * Returns the same model recording how its training graph was built. The weights are shared, not
   * copied.
   *
   * @param conventions the training graph's direction, self-loop and duplicate policies
   * @return a new model
   */
  public AttentionModel withGraphPolicies(GraphPolicies conventions) {
    Objects.requireNonNull(conventions, "conventions");
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        kernelOptions,
        kernels,
        conventions,
        checks,
        pathCosts);
  }

  /**
   * Returns the options the model's kernels are created with.
   *
   * @return the options
   */
  public KernelOptions kernelOptions() {
    return kernelOptions;
  }

  /**
   * Returns a model with the same layers whose kernels use other options (threads, dense memory
   * budget). The weights are shared, not copied.
   *
   * @param options the kernel options
   * @return a new model
   */
  public AttentionModel withKernelOptions(KernelOptions options) {
    Objects.requireNonNull(options, "options");
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        options,
        KernelSource.fromClassPath(options),
        graphPolicies,
        checks,
        pathCosts);
  }

  /**
   * Returns a model with the same layers whose {@link PathChoice#AUTO} choices use the given path
   * cost profile instead of {@link PathCosts#current()}. The weights are shared, not copied.
   *
   * @param costs the profile, for example from {@link PathCosts#read} or {@link
   *     dev.heed.attention.PathCalibration#run}
   * @return a new model
   */
  public AttentionModel withPathCosts(PathCosts costs) {
    Objects.requireNonNull(costs, "costs");
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        kernelOptions,
        kernels,
        graphPolicies,
        checks,
        costs);
  }

  /**
   * Returns the path cost profile {@link PathChoice#AUTO} uses for this model: the one given to
   * {@link #withPathCosts}, else {@link PathCosts#current()}.
   *
   * @return the profile
   */
  public PathCosts pathCosts() {
    return pathCosts != null ? pathCosts : PathCosts.current();
  }

  /** The profile a call with {@code choice} needs: none unless AUTO. */
  PathCosts autoCosts(PathChoice choice) {
    return choice == PathChoice.AUTO ? pathCosts() : null;
  }

  /** The model's kernels. */
  KernelSource kernelSource() {
    return kernels;
  }

  /** The same model with kernels from {@code source}; for tests and the reference check. */
  AttentionModel withKernelSource(KernelSource source) {
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        kernelOptions,
        source,
        graphPolicies,
        checks,
        pathCosts);
  }

  /**
   * Returns whether some layer attends over every node (full self-attention over the complete
   * pattern), so that every node's output depends on every node and a {@link ReceptiveField} is
   * always the whole graph.
   *
   * @return true if a layer attends over the complete pattern
   */
  public boolean needsEveryNode() {
    for (Layer layer : layers) {
      if (layer.reach() == Layer.Reach.EVERY_NODE) {
        return true;
      }
    }
    return false;
  }

  /**
   * Returns the check vectors the model carries: inputs and the probabilities its exporter computed
   * for them. {@link ModelFile#read} has compared them; {@link ModelFile#write} saves them.
   *
   * @return the check vectors, or empty if the model has none
   */
  public Optional<CheckVectors> checks() {
    return Optional.ofNullable(checks);
  }

  /**
   * Returns the same model carrying check vectors, which {@link ModelFile#write} then saves. They
   * are not compared here (see {@link CheckVectors#compareWithReference}). The weights are shared,
   * not copied.
   *
   * @param checks check vectors with this model's feature and class counts
   * @return a new model
   * @throws IllegalArgumentException if the counts differ from the model's
   */
  public AttentionModel withChecks(CheckVectors checks) {
    Objects.requireNonNull(checks, "checks");
    if (checks.featureCount() != inputFeatureCount || checks.classCount() != classLabels.size()) {
      throw new IllegalArgumentException(
          "check vectors of "
              + checks.featureCount()
              + " features and "
              + checks.classCount()
              + " classes do not fit a model of "
              + inputFeatureCount
              + " features and "
              + classLabels.size()
              + " classes");
    }
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        kernelOptions,
        kernels,
        graphPolicies,
        checks,
        pathCosts);
  }

  /**
   * Returns the same model without check vectors. The weights are shared, not copied.
   *
   * @return a new model
   */
  public AttentionModel withoutChecks() {
    return new AttentionModel(
        inputFeatureCount,
        featureNames,
        classLabels,
        layers,
        kernelOptions,
        kernels,
        graphPolicies,
        null,
        pathCosts);
  }

  /**
   * Runs every layer over {@code graph}.
   *
   * @param graph the graph; its node count n is the number of feature rows. Graph-attention and
   *     graph-masked self-attention layers attend along its entries (target i attends to the
   *     sources of row i); full self-attention layers ignore its edges
   * @param features input, not modified: n × {@link #inputFeatureCount()} values, row-major (node
   *     i's features at {@code i * inputFeatureCount()}), all finite
   * @param path which kernel to use (see {@link PathChoice})
   * @param keepAttention whether to return each attention layer's weights (costs 4·E·heads bytes
   *     per layer)
   * @return the class probabilities and, if asked, the attention weights
   * @throws IllegalArgumentException if the feature array's length is not n × inputFeatureCount or
   *     a feature is NaN or infinite (the message names the node and feature)
   * @throws IllegalStateException if the path's kernel is not on the class path
   * @throws dev.heed.attention.MemoryBudgetExceededException if the dense path would exceed its
   *     budget, or a layer's arrays the heap budget ({@link dev.heed.attention.MemoryBudget})
   */
  public ModelOutput forward(
      AttentionPattern graph, float[] features, PathChoice path, boolean keepAttention) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(path, "path");
    int n = graph.nodeCount();
    checkFeatures(features, n, null);
    checkRowWidths(n);
    ForwardPass pass =
        new ForwardPass(
            graph, path, kernels, autoCosts(path), kernelOptions.threads(), keepAttention);
    float[] x = runLayers(pass, features, null, null);
    return new ModelOutput(n, classLabels.size(), x, pass.attention(), pass.layerRuns());
  }

  /**
   * Plans the receptive field of some target nodes: what each layer must compute so that the
   * targets' outputs equal those of a pass over the whole graph. Reads only the rows of the nodes
   * whose outputs are needed, walking outward from the targets (see {@link ReceptiveField}); if a
   * layer attends over every node ({@link #needsEveryNode()}), plans a whole-graph field instead
   * and logs that at debug level.
   *
   * <p>Cost: O(Σ deg) over the nodes whose rows are read plus sorting each local row, independent
   * of the graph's node count (a whole-graph field: O(n + E), nothing if {@code graph} is a {@link
   * CsrGraph}). Stops at the cap before reading further.
   *
   * @param graph input, not modified: in-neighbour rows; n nodes
   * @param targets input, not modified: node ids in {@code 0..n-1}, in any order, repeats allowed
   * @param cap bounds on the field's nodes and entries ({@link FieldCap#NONE} for none)
   * @return the field
   * @throws IllegalArgumentException if a target is out of range (the message gives its position),
   *     or a row of {@code graph} is not strictly increasing or holds an id out of range
   * @throws ReceptiveFieldTooLargeException if the field passes the cap
   * @throws NullPointerException if an argument is null
   */
  public ReceptiveField receptiveField(NeighbourRows graph, int[] targets, FieldCap cap) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(targets, "targets");
    Objects.requireNonNull(cap, "cap");
    checkTargets(targets, graph.nodeCount());
    return FieldPlanner.plan(layers, graph, targets, cap);
  }

  /**
   * Plans the receptive field of some target nodes as {@link #receptiveField(NeighbourRows, int[],
   * FieldCap)} does, stopping at the rows {@code kept} holds: a kept node's layer outputs are read
   * from {@code kept} when the field runs, so its row and its in-neighbours are not read. A target
   * that is not kept computes at most about T + T² + … + T^L attention entries for an L-layer model
   * (T = {@link KeptHubRows#minInDegree()}); a kept target is a lookup, unless {@code
   * computeTargets} asks for every target to be computed from its inputs (needed for its attention
   * weights: then a kept target costs its own row and its non-kept sources' rows). Run the field
   * with features of the same graph and feature matrix the rows were kept for: their outputs are
   * copied in, not checked.
   *
   * <p>Cost: O(Σ deg) over the rows read, as for a field without kept rows, plus one array lookup
   * per source met.
   *
   * @param graph input, not modified: the graph {@code kept} was computed on ({@link
   *     KeptHubRows#graph()}); n nodes
   * @param targets input, not modified: node ids in {@code 0..n-1}, in any order, repeats allowed
   * @param cap bounds on the field's nodes (kept ones included) and entries
   * @param kept rows kept by {@link #keepHubRows} of this model
   * @param computeTargets whether kept targets are computed rather than looked up
   * @return the field; its {@link FieldSize#keptRows()} counts the kept rows it reads
   * @throws IllegalArgumentException if a target is out of range, or {@code kept} was made by
   *     another model or on another graph
   * @throws ReceptiveFieldTooLargeException if the field passes the cap
   * @throws NullPointerException if an argument is null
   */
  public ReceptiveField receptiveField(
      CsrGraph graph, int[] targets, FieldCap cap, KeptHubRows kept, boolean computeTargets) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(targets, "targets");
    Objects.requireNonNull(cap, "cap");
    Objects.requireNonNull(kept, "kept");
    if (kept.layers() != layers) {
      throw new IllegalArgumentException(
          "the kept hub rows were computed by another model; keep them with this model's"
              + " keepHubRows(...)");
    }
    if (kept.graph() != graph) {
      throw new IllegalArgumentException(
          "the kept hub rows were computed on another graph ("
              + kept.graph().nodeCount()
              + " nodes) than the one given ("
              + graph.nodeCount()
              + " nodes); plan with kept.graph()");
    }
    checkTargets(targets, graph.nodeCount());
    return FieldPlanner.plan(layers, graph, targets, cap, kept, computeTargets);
  }

  /**
   * Computes the layer outputs of a graph's hub rows (rows of at least {@code minInDegree} entries,
   * self-loops included) for one feature matrix, for fields planned with {@link
   * #receptiveField(CsrGraph, int[], FieldCap, KeptHubRows, boolean)}: runs the model once over the
   * hubs' receptive field (no field cap applies) and keeps each hub's output of every stage (see
   * {@link KeptHubRows}).
   *
   * <p>Cost: one model pass over the hubs' receptive field, at most a whole-graph pass (on an R-MAT
   * graph with hubs of in-degree 64 or more, most of the graph); memory: {@link
   * KeptHubRows#bytes()} kept, and a field pass's arrays while it runs.
   *
   * @param graph input, not modified: the graph; n nodes. Keep it unchanged (a {@link CsrGraph} is
   *     immutable)
   * @param features input, not modified: n × {@link #inputFeatureCount()} values, row-major, all
   *     finite; the kept outputs are computed from them, so fields run with them must read the same
   *     values
   * @param minInDegree T, at least 1: rows with at least T entries are kept
   * @param path the path the preparation pass runs on
   * @return the kept rows
   * @throws IllegalArgumentException if {@code minInDegree < 1}, the features do not fit the graph,
   *     or a layer attends over every node (then every output depends on every node, and there is
   *     nothing to bound)
   * @throws dev.heed.attention.MemoryBudgetExceededException if the kept rows or the pass do not
   *     fit the heap budget
   * @throws IllegalStateException if the path's kernel is not on the class path
   */
  public KeptHubRows keepHubRows(
      CsrGraph graph, float[] features, int minInDegree, PathChoice path) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(path, "path");
    if (minInDegree < 1) {
      throw new IllegalArgumentException(
          "minInDegree must be at least 1 (rows with that many entries are kept), got "
              + minInDegree);
    }
    if (needsEveryNode()) {
      throw new IllegalArgumentException(
          everyNodeReason()
              + ", so every node's output depends on every node and kept hub rows cannot bound a"
              + " query; classify with NodeClassifier.classify(graph, features) instead");
    }
    checkFeatures(features, graph.nodeCount(), null);
    checkRowWidths(graph.nodeCount());
    return KeptHubRows.prepare(this, graph, features, minInDegree, path);
  }

  /**
   * Runs a field of targets given in hub order (see {@link KeptHubRows#prepare}) and copies the
   * kept layers' outputs at those targets, the field's first rows, into {@code keptOutputs}.
   */
  void forwardKeeping(
      ReceptiveField field, float[] features, PathChoice path, float[][] keptOutputs) {
    ForwardPass pass =
        new ForwardPass(field, path, kernels, autoCosts(path), kernelOptions.threads(), false);
    runLayers(pass, features, field, keptOutputs);
  }

  /**
   * Plans a whole-graph field: every layer over every node of {@code graph}, as {@link
   * #forward(AttentionPattern, float[], PathChoice, boolean)} runs, with its size checked against
   * the cap. For classifying every node, or a graph that is the complete pattern.
   *
   * @param graph input, not modified: the graph; n nodes
   * @param targets input, not modified: the nodes whose outputs are wanted, each in {@code 0..n-1};
   *     or null for every node
   * @param cap bounds on the field's nodes and entries
   * @return the field
   * @throws IllegalArgumentException if a target is out of range
   * @throws ReceptiveFieldTooLargeException if the whole graph passes the cap
   * @throws NullPointerException if {@code graph} or {@code cap} is null
   */
  public ReceptiveField wholeGraphField(AttentionPattern graph, int[] targets, FieldCap cap) {
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(cap, "cap");
    if (targets != null) {
      checkTargets(targets, graph.nodeCount());
    }
    String reason;
    if (targets == null) {
      reason = "every node was requested";
    } else if (graph instanceof CompletePattern) {
      reason = "the graph is the complete pattern";
    } else {
      reason = everyNodeReason();
    }
    return FieldPlanner.whole(layers, graph, targets, cap, reason);
  }

  private String everyNodeReason() {
    for (Layer layer : layers) {
      if (layer.reach() == Layer.Reach.EVERY_NODE) {
        return "layer '" + layer.name() + "' attends over every node (full self-attention)";
      }
    }
    return "a whole-graph pass was asked for";
  }

  /**
   * Runs every layer over a planned field and returns the targets' outputs: equal to a whole-graph
   * pass's at those nodes up to float rounding (the kernels see each row's sources in the field's
   * local order).
   *
   * @param field a field planned by this model (or by one sharing its layers, such as {@link
   *     #withKernelOptions})
   * @param features input, not modified: {@code field.nodeCount()} × {@link #inputFeatureCount()}
   *     values, row-major, row r holding the features of node {@code field.nodeId(r)}; all finite
   * @param path which kernel to use; AUTO decides on each layer's local pattern
   * @param keepAttention whether to keep each attention layer's weights (4 bytes per entry and
   *     head)
   * @return the targets' outputs, each layer's run (rows, entries, path, time) and, if asked, the
   *     attention weights
   * @throws IllegalArgumentException if the field was planned for another model, or the features do
   *     not fit it (length, or a value that is NaN or infinite: the message names the node)
   * @throws IllegalStateException if the path's kernel is not on the class path
   * @throws dev.heed.attention.MemoryBudgetExceededException if the dense path would exceed its
   *     budget, or a layer's arrays the heap budget ({@link dev.heed.attention.MemoryBudget})
   */
  public FieldOutput forward(
      ReceptiveField field, float[] features, PathChoice path, boolean keepAttention) {
    Objects.requireNonNull(field, "field");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(path, "path");
    if (field.layers() != layers) {
      throw new IllegalArgumentException(
          "the receptive field was planned for another model; plan it with this model's"
              + " receptiveField(...)");
    }
    checkFeatures(features, field.nodeCount(), field);
    checkRowWidths(field.nodeCount());
    ForwardPass pass =
        new ForwardPass(
            field, path, kernels, autoCosts(path), kernelOptions.threads(), keepAttention);
    float[] x = runLayers(pass, features, field, null);
    return new FieldOutput(field, classLabels.size(), x, pass.attention(), pass.layerRuns());
  }

  /**
   * Runs every layer; with a field planned with kept rows, appends them to each attention layer's
   * input and the kept targets' outputs to the result. With {@code keep}, copies each layer's first
   * {@code keep[index].length} output values into {@code keep[index]} where it is not null.
   */
  private float[] runLayers(
      ForwardPass pass, float[] features, ReceptiveField field, float[][] keep) {
    float[] x = features;
    for (int index = 0; index < layers.size(); index++) {
      pass.startLayer(index);
      if (field != null) {
        x = field.withKeptRows(index, x);
      }
      long start = System.nanoTime();
      x = layers.get(index).forward(x, pass);
      pass.endLayer(layers.get(index), Math.max(0, System.nanoTime() - start));
      if (keep != null && keep[index] != null) {
        System.arraycopy(x, 0, keep[index], 0, keep[index].length);
      }
    }
    return field == null ? x : field.withKeptTargets(x);
  }

  private static void checkTargets(int[] targets, int n) {
    for (int p = 0; p < targets.length; p++) {
      if (targets[p] < 0 || targets[p] >= n) {
        throw new IllegalArgumentException(
            "node id "
                + targets[p]
                + " at position "
                + p
                + " is out of range; the graph has nodes 0.."
                + (n - 1));
      }
    }
  }

  /** Checks the feature matrix's length and that every value is finite. */
  private void checkFeatures(float[] features, int rows, ReceptiveField field) {
    long expected = (long) rows * inputFeatureCount;
    if (features.length != expected) {
      String what = field == null ? "nodeCount" : "the field's nodeCount";
      throw new IllegalArgumentException(
          "features must hold "
              + what
              + " * inputFeatureCount = "
              + rows
              + " * "
              + inputFeatureCount
              + " = "
              + expected
              + " values (row-major), got "
              + features.length
              + (features.length % Math.max(1, inputFeatureCount) == 0
                  ? " ("
                      + features.length / inputFeatureCount
                      + " rows: does the "
                      + (field == null ? "graph" : "field")
                      + " match?)"
                  : ""));
    }
    for (int i = 0; i < features.length; i++) {
      if (!Float.isFinite(features[i])) {
        int row = i / inputFeatureCount;
        throw new IllegalArgumentException(
            "feature "
                + i % inputFeatureCount
                + " of node "
                + (field == null ? row : field.nodeId(row) + " (field row " + row + ")")
                + " is "
                + features[i]
                + "; features must be finite");
      }
    }
  }

  /** Checks that {@code n} rows of every layer's widest row fit in one Java array. */
  private void checkRowWidths(int n) {
    for (Layer layer : layers) {
      if ((long) n * layer.widestRow() > Integer.MAX_VALUE - 8) {
        throw new IllegalArgumentException(
            "the graph has "
                + n
                + " nodes, too many for layer '"
                + layer.name()
                + "': n × "
                + layer.widestRow()
                + " values exceed one Java array; split the graph");
      }
    }
  }

  @Override
  public String toString() {
    return "AttentionModel["
        + inputFeatureCount
        + " features -> "
        + layers
        + " -> "
        + classLabels
        + "]";
  }
}
