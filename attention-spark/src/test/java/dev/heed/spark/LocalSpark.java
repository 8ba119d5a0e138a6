package dev.heed.spark;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.GraphPolicies;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import org.apache.spark.api.java.JavaRDD;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;

/**
 * One Spark session in local mode for every test of the module (starting one costs seconds), with
 * few shuffle partitions, and helpers that build frames and the single-machine reference.
 */
final class LocalSpark {

  private static SparkSession session;

  private LocalSpark() {}

  static synchronized SparkSession session() {
    if (session == null) {
      session =
          SparkSession.builder()
              .master("local[2]")
              .appName("heed-spark-tests")
              .config("spark.sql.shuffle.partitions", "2")
              .config("spark.default.parallelism", "2")
              .config("spark.driver.host", "127.0.0.1")
              .config("spark.driver.bindAddress", "127.0.0.1")
              .config("spark.ui.enabled", "false")
              .config("spark.sql.adaptive.enabled", "false")
              // Test frames are small: compiling generated code for every stage costs more than
              // interpreting it.
              .config("spark.sql.codegen.wholeStage", "false")
              // ... and the same for single expressions (projections, predicates, orderings).
              .config("spark.sql.codegen.factoryMode", "NO_CODEGEN")
              // Local files and memory: compressing shuffle blocks and broadcasts only costs.
              .config("spark.shuffle.compress", "false")
              .config("spark.shuffle.spill.compress", "false")
              .config("spark.broadcast.compress", "false")
              .config("spark.driver.memory", "1g")
              .getOrCreate();
      Runtime.getRuntime().addShutdownHook(new Thread(session::stop));
    }
    return session;
  }

  /**
   * Rows as an RDD-backed frame's input: a frame made from a local list keeps the rows in its plan,
   * which Spark's analyser then copies with every derived plan.
   */
  static JavaRDD<Row> rdd(List<Row> rows) {
    return JavaSparkContext.fromSparkContext(session().sparkContext()).parallelize(rows);
  }

  /** Edges (source, target) with long ids. */
  static Dataset<Row> edges(int[] sources, int[] targets) {
    List<Row> rows = new ArrayList<>(sources.length);
    for (int k = 0; k < sources.length; k++) {
      rows.add(RowFactory.create((long) sources[k], (long) targets[k]));
    }
    StructType schema =
        new StructType().add("source", DataTypes.LongType).add("target", DataTypes.LongType);
    return session().createDataFrame(rdd(rows), schema);
  }

  /** Features (id, f0 .. f{w-1}) with long ids 0..n-1, rows in the given order of ids. */
  static Dataset<Row> features(float[] x, int n, int width, List<String> names) {
    List<Row> rows = new ArrayList<>(n);
    for (int i = 0; i < n; i++) {
      Object[] r = new Object[width + 1];
      r[0] = (long) i;
      for (int c = 0; c < width; c++) {
        r[c + 1] = x[i * width + c];
      }
      rows.add(RowFactory.create(r));
    }
    StructType schema = new StructType().add("id", DataTypes.LongType);
    for (String name : names) {
      schema = schema.add(name, DataTypes.FloatType);
    }
    return session().createDataFrame(rdd(rows), schema);
  }

  /** Single-machine Heed over the same edges: class probabilities, row-major. */
  static float[] reference(
      AttentionModel model, int[] sources, int[] targets, int n, float[] x, GraphPolicies p) {
    CsrGraph graph = CsrGraphBuilder.fromEdges(sources, targets, n).policies(p).build();
    NodeFeatures.ofRowMajor(x, n, model.inputFeatureCount()); // the same checks as classify
    return model.forward(graph, x, PathChoice.SPARSE, false).values();
  }

  /**
   * Single-machine Heed's explanation over the same edges: per node, the last attention layer's
   * {@code k} neighbours of largest weight averaged over heads, best first.
   */
  static List<List<NeighbourWeight>> explanations(
      AttentionModel model,
      int[] sources,
      int[] targets,
      int n,
      float[] x,
      GraphPolicies p,
      int k) {
    CsrGraph graph = CsrGraphBuilder.fromEdges(sources, targets, n).policies(p).build();
    Classification c =
        NodeClassifier.of(
                model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE).withExplanations(k))
            .classify(graph, NodeFeatures.ofRowMajor(x, n, model.inputFeatureCount()));
    List<List<NeighbourWeight>> out = new ArrayList<>(n);
    for (NodePrediction prediction : c.predictions()) {
      List<LayerExplanation> layers = prediction.explanation().orElseThrow();
      out.add(layers.get(layers.size() - 1).topNeighbours());
    }
    return out;
  }

  /** The predictions by long id: the {@code classes} probability columns (from column 3 on). */
  static Map<Long, float[]> byId(Dataset<Row> predictions, int classes) {
    Map<Long, float[]> out = new HashMap<>();
    for (Row r : predictions.collectAsList()) {
      float[] p = new float[classes];
      for (int c = 0; c < p.length; c++) {
        p[c] = r.getFloat(3 + c);
      }
      out.put(r.getLong(0), p);
    }
    return out;
  }
}
