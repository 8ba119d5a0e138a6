package dev.heed.bench.model;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.StaticGraphScorer;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyArray;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Scoring one node exactly over its receptive field against a pass over the whole graph, on an
 * R-MAT graph ({@link RmatGenerator}, Graph500 initiator, scrambled ids) of {@code 2^scale} nodes
 * and {@code edgeFactor · 2^scale} generated edges, symmetrised, self-loops added, repeats merged
 * (scale 20: 1,048,576 nodes, about 32.5 M attention entries). The model: two GAT layers of 8 heads
 * × 8 dims (concatenated; ELU after the first), a dense layer to 4 classes and the softmax head, 64
 * input features; weights and features seeded Gaussian values.
 *
 * <p>{@code targeted}: {@code NodeClassifier.classify(graph, features, node)} for one node per
 * call, walking a fixed list of {@code queries} seeded random nodes (the walk restarts at every
 * iteration, so one measurement iteration long enough covers the list once). Sample-time mode: read
 * the p0.50 and p0.99 of the per-call distribution. {@code wholeGraph}: the same model over every
 * node ({@code AttentionModel.forward}, no classification objects), what each call cost before.
 * {@code targetedKept}: the same walk through a {@link StaticGraphScorer} prepared once per fork
 * ({@code NodeClassifier.forStaticGraph}, rows of in-degree at least {@code hubDegree} kept; the
 * preparation time and kept bytes are printed), so that a field stops at every hub. All on the
 * sparse path with the default kernel options (one thread per processor). Run with, for example:
 *
 * <pre>
 * java -jar benchmarks/target/benchmarks.jar TargetedScoringBenchmark -rf json -rff targeted.json
 * </pre>
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.SampleTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Fork(
    value = 1,
    jvmArgsAppend = {
      "--add-modules",
      "jdk.incubator.vector",
      "-Xms8g",
      "-Xmx8g",
      "-XX:+UseTransparentHugePages",
      "-Dorg.bytedeco.javacpp.maxphysicalbytes=10g",
      "-Dorg.nd4j.log.initialization=false"
    })
public class TargetedScoringBenchmark {

  /** log2 of the node count. */
  @Param({"20"})
  public int scale;

  /** Generated edges per node (before symmetrising). */
  @Param({"16"})
  public int edgeFactor;

  /** How many seeded random nodes the targeted calls walk through. */
  @Param({"10000"})
  public int queries;

  /** Seed of the graph, weights, features and query nodes. */
  @Param({"20260611"})
  public long seed;

  /** Least in-degree of a kept row for {@code targetedKept}. */
  @Param({"128"})
  public int hubDegree;

  private static final int FEATURES = 64;
  private static final int HEADS = 8;
  private static final int HEAD_WIDTH = 8;
  private static final int CLASSES = 4;

  CsrGraph graph;
  float[] values;
  NodeFeatures features;
  AttentionModel model;
  NodeClassifier classifier;
  int[] targets;
  private int next;

  /** Builds the graph, features, model and query list. */
  @Setup
  public void setUp() throws ModelFormatException {
    graph =
        RmatGenerator.withScale(scale)
            .edgeFactor(edgeFactor)
            .seed(seed)
            .generateEdges()
            .direction(DirectionPolicy.SYMMETRISE)
            .selfLoops(SelfLoopPolicy.ADD)
            .duplicates(DuplicatePolicy.MERGE)
            .build();
    int n = graph.nodeCount();
    SplittableRandom random = new SplittableRandom(seed);
    values = new float[n * FEATURES];
    for (int i = 0; i < values.length; i++) {
      values[i] = (float) gaussian(random);
    }
    features = NodeFeatures.ofRowMajor(values, n, FEATURES);
    model = model(random);
    classifier = NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE));
    targets = new int[queries];
    for (int q = 0; q < queries; q++) {
      targets[q] = random.nextInt(n);
    }
    System.out.println(
        "graph: "
            + n
            + " nodes, "
            + graph.edgeCount()
            + " attention entries; "
            + queries
            + " query nodes");
  }

  /** Restarts the walk over the query nodes, so a long iteration covers each of them. */
  @Setup(Level.Iteration)
  public void restartQueries() {
    next = 0;
  }

  /**
   * The benchmark model: two GAT layers of 8 heads × 8 dims (concatenated; ELU after the first), a
   * dense layer to 4 classes and the softmax head, 64 input features, seeded Gaussian weights
   * scaled by 1/√fan-in. Also used by the live-graph refresh benchmark.
   *
   * @param random the weights' source
   * @return the model
   * @throws ModelFormatException never for these parts
   */
  public static AttentionModel model(SplittableRandom random) throws ModelFormatException {
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    int hd = HEADS * HEAD_WIDTH;
    tensors.put("gat1.weight", gaussianTensor(random, FEATURES, FEATURES, hd));
    tensors.put("gat1.attention_target", gaussianTensor(random, HEAD_WIDTH, HEADS, HEAD_WIDTH));
    tensors.put("gat1.attention_source", gaussianTensor(random, HEAD_WIDTH, HEADS, HEAD_WIDTH));
    tensors.put("gat2.weight", gaussianTensor(random, hd, hd, hd));
    tensors.put("gat2.attention_target", gaussianTensor(random, HEAD_WIDTH, HEADS, HEAD_WIDTH));
    tensors.put("gat2.attention_source", gaussianTensor(random, HEAD_WIDTH, HEADS, HEAD_WIDTH));
    tensors.put("out.weight", gaussianTensor(random, hd, hd, CLASSES));
    tensors.put("out.bias", gaussianTensor(random, 1, CLASSES));
    String gat =
        "{\"kind\": \"graph_attention\", \"name\": \"%s\", \"score\": \"gat\", \"heads\": "
            + HEADS
            + ", \"head_width\": "
            + HEAD_WIDTH
            + ", \"combine_heads\": \"concat\", \"activation\": \"%s\", \"tensors\": {\"weight\": \"%s.weight\","
            + " \"attention_target\": \"%s.attention_target\","
            + " \"attention_source\": \"%s.attention_source\"}}";
    String description =
        "{\"format\": \"heed-model\", \"format_version\": 1, \"input_features\": "
            + FEATURES
            + ", \"class_labels\": [\"a\", \"b\", \"c\", \"d\"], \"layers\": ["
            + String.format(gat, "gat1", "elu", "gat1", "gat1", "gat1")
            + ", "
            + String.format(gat, "gat2", "identity", "gat2", "gat2", "gat2")
            + ", {\"kind\": \"dense\", \"name\": \"out\", \"units\": "
            + CLASSES
            + ", \"tensors\": {\"weight\": \"out.weight\", \"bias\": \"out.bias\"}},"
            + " {\"kind\": \"softmax\", \"name\": \"probabilities\"}]}";
    return ModelFile.fromParts(description, tensors);
  }

  /** Gaussian values scaled by 1/√fanIn, in the given shape. */
  private static NpyArray gaussianTensor(SplittableRandom random, int fanIn, int... shape) {
    int size = 1;
    for (int d : shape) {
      size *= d;
    }
    float[] v = new float[size];
    double scale = 1.0 / Math.sqrt(fanIn);
    for (int i = 0; i < size; i++) {
      v[i] = (float) (scale * gaussian(random));
    }
    return NpyArray.ofFloats(v, shape);
  }

  /**
   * A standard normal value (Box-Muller, common practice).
   *
   * @param random the source
   * @return the value
   */
  public static double gaussian(SplittableRandom random) {
    double u = 1.0 - random.nextDouble();
    return Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * random.nextDouble());
  }

  /**
   * Classifies the next query node over its receptive field.
   *
   * @return the classification (consumed by JMH)
   */
  @Benchmark
  @Warmup(iterations = 1, time = 20)
  @Measurement(iterations = 1, time = 240)
  public Classification targeted() {
    int node = targets[next];
    next = next + 1 == targets.length ? 0 : next + 1;
    return classifier.classify(graph, features, node);
  }

  /**
   * The scorer with kept hub rows, prepared once per fork (only for the benchmark that uses it).
   */
  @State(Scope.Benchmark)
  public static class KeptRows {
    StaticGraphScorer scorer;

    /**
     * Prepares the scorer on the benchmark's graph and features.
     *
     * @param b the benchmark state (graph, features, classifier, hub degree)
     */
    @Setup
    public void setUp(TargetedScoringBenchmark b) {
      scorer = b.classifier.forStaticGraph(b.graph, b.features, b.hubDegree);
      System.out.println(
          "kept rows: "
              + scorer.keptRowCount()
              + " hubs (in-degree >= "
              + b.hubDegree
              + "), "
              + scorer.keptBytes()
              + " bytes, prepared in "
              + scorer.preparationTime().toMillis()
              + " ms");
    }
  }

  /**
   * Classifies the next query node with kept hub rows.
   *
   * @param kept the prepared scorer
   * @return the classification (consumed by JMH)
   */
  @Benchmark
  @Warmup(iterations = 1, time = 20)
  @Measurement(iterations = 1, time = 60)
  public Classification targetedKept(KeptRows kept) {
    int node = targets[next];
    next = next + 1 == targets.length ? 0 : next + 1;
    return kept.scorer.classify(node);
  }

  /**
   * Runs the model over every node.
   *
   * @return the output (consumed by JMH)
   */
  @Benchmark
  @Warmup(iterations = 1, time = 30)
  @Measurement(iterations = 1, time = 100)
  public ModelOutput wholeGraph() {
    return model.forward(graph, values, PathChoice.SPARSE, false);
  }
}
