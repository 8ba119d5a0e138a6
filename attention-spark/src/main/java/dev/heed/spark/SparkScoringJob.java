package dev.heed.spark;

import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyLimits;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.sql.DataFrameReader;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.SaveMode;
import org.apache.spark.sql.SparkSession;

/**
 * The spark-submit entry point: reads a model, an edges frame and a features frame, classifies
 * every node with {@link SparkNodeClassifier} and writes the predictions.
 *
 * <pre>
 * spark-submit --class dev.heed.spark.SparkScoringJob attention-spark-VERSION-job.jar \
 *   --model M.heed --edges EDGES --features FEATURES --out PREDICTIONS
 *   [--edges-format parquet|csv] [--features-format parquet|csv] [--out-format parquet|csv]
 *   [--id-column id] [--source-column source] [--target-column target]
 *   [--feature-columns A,B,...] [--direction symmetrise|keep] [--self-loops add|as-given]
 *   [--duplicates merge|reject] [--override-graph-policies] [--max-row-entries N]
 *   [--partitions N] [--explain K] [--overwrite]
 * </pre>
 *
 * <p>The model path is read through Spark's file systems (local, HDFS, object stores), so the
 * driver needs no local copy. CSV files have a header line; their ids are read as text and their
 * features as numbers. Graph conventions default to the model's; giving other ones fails, naming
 * each difference, unless {@code --override-graph-policies} is given (as {@code heed classify}).
 * {@code --explain K} adds each node's K strongest attention neighbours in the last attention layer
 * ({@link SparkNodeClassifier.Builder#explainNeighbours}). Exit codes: 0 done, 1 bad input (the
 * message says what and how to fix it), 2 usage.
 */
public final class SparkScoringJob {

  private SparkScoringJob() {}

  /**
   * Runs the job in the session spark-submit created (or a new local one).
   *
   * @param args the options above
   */
  public static void main(String[] args) {
    Map<String, String> opts;
    try {
      opts = parse(args);
    } catch (IllegalArgumentException e) {
      System.err.println("heed spark: " + e.getMessage());
      System.err.println(usage());
      System.exit(2);
      return;
    }
    SparkSession spark = SparkSession.builder().appName("heed-classify").getOrCreate();
    try {
      run(spark, opts);
    } catch (IllegalArgumentException | IOException e) {
      System.err.println("heed spark: " + e.getMessage());
      System.exit(1);
    } finally {
      spark.stop();
    }
  }

  /**
   * Runs the job in a given session; for tests and for callers that hold a session.
   *
   * @param spark the session
   * @param opts the parsed options
   * @throws IOException if the model cannot be read
   * @throws IllegalArgumentException if an option or the input is bad
   */
  static void run(SparkSession spark, Map<String, String> opts) throws IOException {
    String modelPath = opts.get("model");
    byte[] bytes =
        JavaSparkContext.fromSparkContext(spark.sparkContext())
            .binaryFiles(modelPath)
            .first()
            ._2()
            .toArray();
    AttentionModel model =
        ModelFile.read(new ByteArrayInputStream(bytes), modelPath, NpyLimits.defaults());
    SparkNodeClassifier.Builder b =
        SparkNodeClassifier.builder(model)
            .idColumn(opts.getOrDefault("id-column", "id"))
            .sourceColumn(opts.getOrDefault("source-column", "source"))
            .targetColumn(opts.getOrDefault("target-column", "target"));
    if (opts.containsKey("feature-columns")) {
      b.featureColumns(Arrays.asList(opts.get("feature-columns").split(",")));
    }
    if (opts.containsKey("max-row-entries")) {
      b.maxRowEntries(Integer.parseInt(opts.get("max-row-entries")));
    }
    if (opts.containsKey("partitions")) {
      b.partitions(Integer.parseInt(opts.get("partitions")));
    }
    if (opts.containsKey("explain")) {
      b.explainNeighbours(Integer.parseInt(opts.get("explain")));
    }
    GraphPolicies recorded = model.graphPolicies().orElse(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
    GraphPolicies asked =
        new GraphPolicies(
            GraphPolicies.policy(
                DirectionPolicy.class,
                opts.getOrDefault("direction", GraphPolicies.word(recorded.direction()))),
            GraphPolicies.policy(
                SelfLoopPolicy.class,
                opts.getOrDefault("self-loops", GraphPolicies.word(recorded.selfLoops()))),
            GraphPolicies.policy(
                DuplicatePolicy.class,
                opts.getOrDefault("duplicates", GraphPolicies.word(recorded.duplicates()))));
    List<String> differences = recorded.differences(asked);
    if (!differences.isEmpty() && model.graphPolicies().isPresent()) {
      if (!opts.containsKey("override-graph-policies")) {
        throw new IllegalArgumentException(
            "the model was trained on a graph built otherwise: "
                + String.join("; ", differences)
                + "; drop those options, or add --override-graph-policies to build it as asked");
      }
    }
    b.graphPolicies(asked);
    Dataset<Row> edges =
        read(spark, opts.getOrDefault("edges-format", "parquet"), opts.get("edges"));
    Dataset<Row> features =
        read(spark, opts.getOrDefault("features-format", "parquet"), opts.get("features"));
    if (opts.getOrDefault("features-format", "parquet").equals("csv")) {
      features = InputChecks.numericFeatures(features, opts.getOrDefault("id-column", "id"));
    }
    try (SparkScores scores = b.build().classify(spark, edges, features)) {
      var writer =
          scores
              .predictions()
              .write()
              .mode(opts.containsKey("overwrite") ? SaveMode.Overwrite : SaveMode.ErrorIfExists);
      String format = opts.getOrDefault("out-format", "parquet");
      if (format.equals("csv")) {
        writer.option("header", "true").csv(opts.get("out"));
      } else {
        writer.parquet(opts.get("out"));
      }
    }
  }

  private static Dataset<Row> read(SparkSession spark, String format, String path) {
    DataFrameReader r = spark.read();
    if (format.equals("csv")) {
      return r.option("header", "true").csv(path);
    }
    return r.parquet(path);
  }

  private static final List<String> VALUED =
      List.of(
          "model",
          "edges",
          "features",
          "out",
          "edges-format",
          "features-format",
          "out-format",
          "id-column",
          "source-column",
          "target-column",
          "feature-columns",
          "direction",
          "self-loops",
          "duplicates",
          "max-row-entries",
          "partitions",
          "explain");
  private static final List<String> FLAGS = List.of("override-graph-policies", "overwrite");

  /** Parses {@code --name value} and {@code --flag} options. */
  static Map<String, String> parse(String[] args) {
    Map<String, String> opts = new LinkedHashMap<>();
    for (int i = 0; i < args.length; i++) {
      String a = args[i];
      if (!a.startsWith("--")) {
        throw new IllegalArgumentException("unexpected argument '" + a + "'");
      }
      String name = a.substring(2);
      if (FLAGS.contains(name)) {
        opts.put(name, "true");
      } else if (VALUED.contains(name)) {
        if (i + 1 >= args.length) {
          throw new IllegalArgumentException("--" + name + " needs a value");
        }
        opts.put(name, args[++i]);
      } else {
        throw new IllegalArgumentException("unknown option '" + a + "'");
      }
    }
    List<String> missing = new ArrayList<>();
    for (String required : List.of("model", "edges", "features", "out")) {
      if (!opts.containsKey(required)) {
        missing.add("--" + required);
      }
    }
    if (!missing.isEmpty()) {
      throw new IllegalArgumentException("missing " + String.join(", ", missing));
    }
    for (String f : List.of("edges-format", "features-format", "out-format")) {
      String v = opts.get(f);
      if (v != null && !v.equals("parquet") && !v.equals("csv")) {
        throw new IllegalArgumentException("--" + f + " must be parquet or csv, got '" + v + "'");
      }
    }
    for (String n : List.of("max-row-entries", "partitions", "explain")) {
      String v = opts.get(n);
      if (v != null && !v.matches("[0-9]{1,9}")) {
        throw new IllegalArgumentException("--" + n + " must be a whole number, got '" + v + "'");
      }
    }
    return opts;
  }

  static String usage() {
    return "usage: spark-submit --class dev.heed.spark.SparkScoringJob attention-spark-job.jar"
        + " --model M.heed --edges PATH --features PATH --out PATH"
        + " [--edges-format|--features-format|--out-format parquet|csv]"
        + " [--id-column C] [--source-column C] [--target-column C] [--feature-columns A,B,...]"
        + " [--direction symmetrise|keep] [--self-loops add|as-given] [--duplicates merge|reject]"
        + " [--override-graph-policies] [--max-row-entries N] [--partitions N] [--explain K]"
        + " [--overwrite]";
  }
}
