package dev.heed.spark;

import static org.apache.spark.sql.functions.broadcast;
import static org.apache.spark.sql.functions.ceil;
import static org.apache.spark.sql.functions.col;
import static org.apache.spark.sql.functions.hash;
import static org.apache.spark.sql.functions.lit;
import static org.apache.spark.sql.functions.pmod;
import static org.apache.spark.sql.functions.when;

import dev.heed.graph.GraphPolicies;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerSteps;
import dev.heed.model.ModelFile;
import java.util.ArrayList;
import java.util.List;
import java.util.Objects;
import org.apache.spark.api.java.JavaSparkContext;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Encoders;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.SparkSession;
import org.apache.spark.sql.types.DataType;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.Metadata;
import org.apache.spark.sql.types.StructField;
import org.apache.spark.sql.types.StructType;
import org.apache.spark.storage.StorageLevel;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Classifies the nodes of a graph held as Spark DataFrames with a Heed model, on a cluster. The
 * graph is an edges frame (source id, target id: the target attends to the source) and a features
 * frame (id, one numeric column per model input feature), from any Spark source; the result is a
 * frame of (id, {@code label}, {@code probability}, {@code p_<label>} per class label), optionally
 * followed by each node's strongest attention neighbours ({@link Builder#explainNeighbours}).
 *
 * <pre>{@code
 * AttentionModel model = ModelFile.read(Path.of("model.heed"));
 * SparkNodeClassifier classifier =
 *     SparkNodeClassifier.builder(model)
 *         .idColumn("account").sourceColumn("from").targetColumn("to")
 *         .build();                            // graph conventions: the model's
 * try (SparkScores scores = classifier.classify(spark, edges, features)) {
 *   scores.predictions().write().parquet("predictions");
 * }
 * }</pre>
 *
 * <p>How it runs: the edges are built into the model's graph by its conventions (direction,
 * self-loops, duplicates, with the meanings of {@link dev.heed.graph.CsrGraphBuilder}); then each
 * attention layer is three relational steps: every node's query, key and value rows are projected
 * where the node's row lies; edges are joined with their sources' key and value rows and, with the
 * targets' query rows, shuffled by target and sorted; each partition gathers whole rows into CSR
 * blocks and runs Heed's sparse kernel over them, then finishes the layer per node. A row with more
 * than {@link Builder#maxRowEntries} entries is split into parts on different tasks, each folded
 * into a softmax state (running maximum, sum of exponentials, weighted sum) that merges exactly
 * (Milakov and Gimelshein 2018). The driver never collects the graph; each layer is materialised
 * (persisted, memory then disk) before the next starts, and {@link SparkScores#close()} releases
 * the last.
 *
 * <p>Input is checked before any layer runs (missing or non-numeric columns, a feature count other
 * than the model's, null or duplicate ids, null, NaN or infinite features, edge ids without a
 * feature row, repeated edges when the conventions reject them): an {@link
 * IllegalArgumentException} names the column, ids and fix.
 *
 * <p>Cost per attention layer: O(E·(keyWidth + valueWidth)) bytes shuffled for the entries plus
 * O(n·(queryWidth + inputWidth)) for the targets' rows; compute as the single-machine kernel's.
 *
 * <p>Thread safety: immutable; {@link #classify} may be called from several threads, each with its
 * own frames.
 */
public final class SparkNodeClassifier {

  private static final Logger LOG = LoggerFactory.getLogger(SparkNodeClassifier.class);

  /** Default for {@link Builder#maxRowEntries}: rows longer than 65,536 entries are split. */
  public static final int DEFAULT_MAX_ROW_ENTRIES = 1 << 16;

  private final AttentionModel model;
  private final byte[] modelBytes;
  private final LayerSteps steps;
  private final String idColumn;
  private final String sourceColumn;
  private final String targetColumn;
  private final List<String> featureColumns;
  private final GraphPolicies policies;
  private final int maxRowEntries;
  private final int partitions;
  private final int explainNeighbours;

  private SparkNodeClassifier(Builder b, LayerSteps steps, GraphPolicies policies) {
    this.model = b.model;
    this.modelBytes = ModelFile.toBytes(b.model);
    this.steps = steps;
    this.idColumn = b.idColumn;
    this.sourceColumn = b.sourceColumn;
    this.targetColumn = b.targetColumn;
    this.featureColumns = b.featureColumns;
    this.policies = policies;
    this.maxRowEntries = b.maxRowEntries;
    this.partitions = b.partitions;
    this.explainNeighbours = b.explainNeighbours;
  }

  /**
   * Starts a classifier for a model. Defaults: id column {@code id}, edge columns {@code source}
   * and {@code target}, the model's feature names as feature columns (or, for a model without
   * names, every column of the features frame but the id, in order), the model's graph conventions
   * (or {@link GraphPolicies#UNDIRECTED_WITH_SELF_LOOPS}, with a warning, for a model that records
   * none), rows split over {@link #DEFAULT_MAX_ROW_ENTRIES}, Spark's shuffle partition count, no
   * neighbour columns.
   *
   * @param model the model, not null
   * @return the builder
   */
  public static Builder builder(AttentionModel model) {
    return new Builder(Objects.requireNonNull(model, "model"));
  }

  /**
   * Builder for {@link SparkNodeClassifier}.
   *
   * <p>Thread safety: not thread-safe.
   */
  public static final class Builder {
    private final AttentionModel model;
    private String idColumn = "id";
    private String sourceColumn = "source";
    private String targetColumn = "target";
    private List<String> featureColumns;
    private GraphPolicies policies;
    private int maxRowEntries = DEFAULT_MAX_ROW_ENTRIES;
    private int partitions;
    private int explainNeighbours;

    private Builder(AttentionModel model) {
      this.model = model;
    }

    /**
     * Sets the features frame's id column.
     *
     * @param name the column name
     * @return this builder
     */
    public Builder idColumn(String name) {
      this.idColumn = Objects.requireNonNull(name, "idColumn");
      return this;
    }

    /**
     * Sets the edges frame's source column (the node attended to).
     *
     * @param name the column name
     * @return this builder
     */
    public Builder sourceColumn(String name) {
      this.sourceColumn = Objects.requireNonNull(name, "sourceColumn");
      return this;
    }

    /**
     * Sets the edges frame's target column (the node that attends).
     *
     * @param name the column name
     * @return this builder
     */
    public Builder targetColumn(String name) {
      this.targetColumn = Objects.requireNonNull(name, "targetColumn");
      return this;
    }

    /**
     * Sets the feature columns, in the model's input order.
     *
     * @param names as many names as the model has input features
     * @return this builder
     */
    public Builder featureColumns(List<String> names) {
      this.featureColumns = List.copyOf(names);
      return this;
    }

    /**
     * Builds the graph with these conventions instead of the model's (an override: a graph built
     * otherwise than the training graph gives different predictions with no error).
     *
     * @param conventions direction, self-loops and duplicates
     * @return this builder
     */
    public Builder graphPolicies(GraphPolicies conventions) {
      this.policies = Objects.requireNonNull(conventions, "conventions");
      return this;
    }

    /**
     * Sets the longest row computed whole by one task; a longer row is split into {@code
     * ceil(entries / max)} parts on different tasks, merged exactly.
     *
     * @param max at least 1
     * @return this builder
     */
    public Builder maxRowEntries(int max) {
      if (max < 1) {
        throw new IllegalArgumentException("maxRowEntries must be at least 1, got " + max);
      }
      this.maxRowEntries = max;
      return this;
    }

    /**
     * Sets the number of partitions of the per-layer shuffles; 0 (the default) takes {@code
     * spark.sql.shuffle.partitions}.
     *
     * @param count at least 0
     * @return this builder
     */
    public Builder partitions(int count) {
      if (count < 0) {
        throw new IllegalArgumentException("partitions must be at least 0, got " + count);
      }
      this.partitions = count;
      return this;
    }

    /**
     * Adds each node's {@code k} strongest attention neighbours in the model's last attention layer
     * to the predictions: columns {@code neighbour_1, weight_1, ..., neighbour_k, weight_k} after
     * the probabilities (the id type, float; null past the node's entry count), as {@code heed
     * classify --explain k} writes them. The weight is the attention weight α averaged over heads,
     * as {@link dev.heed.classify.LayerExplanation#topNeighbours()} defines it; ties go to the
     * smaller id. Split rows included (their weights are computed from the merged softmax
     * normaliser, after the merge). Cost: the source id travels with every entry of that layer, the
     * kernel writes the weights (entries × heads floats per block), and split rows' entries are
     * read once more.
     *
     * @param k the number of neighbours, at least 0 (0, the default, adds no columns)
     * @return this builder
     */
    public Builder explainNeighbours(int k) {
      if (k < 0) {
        throw new IllegalArgumentException("explainNeighbours must be at least 0, got " + k);
      }
      this.explainNeighbours = k;
      return this;
    }

    /**
     * Checks the model and builds the classifier.
     *
     * @return the classifier
     * @throws IllegalArgumentException if a layer attends to every node (full self-attention): it
     *     cannot run over blocks of rows; the message names the layer
     */
    public SparkNodeClassifier build() {
      LayerSteps steps = LayerSteps.of(model);
      GraphPolicies p = policies;
      if (p == null) {
        p = model.graphPolicies().orElse(null);
        if (p == null) {
          LOG.warn(
              "the model does not record how its graph was built; using {}",
              GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
          p = GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS;
        }
      }
      return new SparkNodeClassifier(this, steps, p);
    }
  }

  /**
   * Returns the graph conventions this classifier builds the graph with.
   *
   * @return the conventions
   */
  public GraphPolicies graphPolicies() {
    return policies;
  }

  /**
   * Classifies every node of the features frame. Checks the input first (small Spark jobs), then
   * runs and materialises one layer at a time; the returned predictions are computed from the last
   * layer when first used.
   *
   * @param spark the session
   * @param edges input, not modified: the source and target columns (any other columns are ignored)
   * @param features input, not modified: the id column and the feature columns
   * @return the predictions; close it to release the persisted last layer
   * @throws IllegalArgumentException if the input is malformed (the message says what, where and
   *     how to fix it)
   */
  public SparkScores classify(SparkSession spark, Dataset<Row> edges, Dataset<Row> features) {
    spark.sparkContext().setJobDescription("heed input checks");
    List<String> columns = InputChecks.featureColumns(model, features, idColumn, featureColumns);
    DataType idType = InputChecks.idType(features, idColumn);
    Dataset<Row> nodeFeatures = InputChecks.castFeatures(features, idColumn, columns);
    Dataset<Row> edgeIds = InputChecks.castEdges(edges, sourceColumn, targetColumn, idType);
    InputChecks.checkNodes(nodeFeatures, idColumn, columns);
    InputChecks.checkEdges(edgeIds, nodeFeatures, idColumn, sourceColumn, targetColumn);

    int shuffle =
        partitions > 0
            ? partitions
            : Integer.parseInt(spark.conf().get("spark.sql.shuffle.partitions", "200"));
    Broadcast<byte[]> bytes =
        JavaSparkContext.fromSparkContext(spark.sparkContext()).broadcast(modelBytes);
    List<Dataset<?>> held = new ArrayList<>();

    // The graph is built and persisted once (its shuffle for merging duplicates is the costly
    // part): the hub list and every layer read the persisted entries; each layer adds the part
    // column by a broadcast join with the hub list, cheaper than persisting a second copy.
    spark.sparkContext().setJobDescription("heed graph conventions");
    Dataset<Row> graph =
        EdgePolicyFrames.apply(edgeIds, nodeFeatures.select(col(idColumn).as("id")), policies)
            .persist(StorageLevel.MEMORY_AND_DISK());
    Dataset<Row> hubs =
        graph
            .groupBy("dst")
            .count()
            .filter(col("count").gt(maxRowEntries))
            .select(
                col("dst").as("hub"),
                ceil(col("count").divide(maxRowEntries)).cast("int").as("parts"))
            .persist(StorageLevel.MEMORY_AND_DISK());
    long splitRows = hubs.count();
    long entryCount = graph.count();
    Dataset<Row> parted =
        splitRows == 0
            ? graph.select(col("src"), col("dst"), lit(0).as("part"))
            : graph
                .join(broadcast(hubs), col("dst").equalTo(col("hub")), "left")
                .select(
                    col("src"),
                    col("dst"),
                    when(col("parts").isNull(), lit(0))
                        .otherwise(pmod(hash(col("src")), col("parts")))
                        .as("part"));
    LOG.info(
        "graph: {} entries, {} rows split over {} entries", entryCount, splitRows, maxRowEntries);

    int first = ExecutorModel.nextAttention(steps, 0);
    int last = -1;
    for (int l = first; l < steps.layerCount(); l = ExecutorModel.nextAttention(steps, l + 1)) {
      last = l;
    }
    StructType nodeSchema =
        new StructType(
            new StructField[] {
              new StructField("id", idType, false, Metadata.empty()),
              new StructField("x", DataTypes.BinaryType, false, Metadata.empty())
            });
    Dataset<Row> current =
        nodeFeatures.mapPartitions(
            NodeRowSteps.features(bytes, columns.size(), 0, first), Encoders.row(nodeSchema));
    for (int l = first; l < steps.layerCount(); l = ExecutorModel.nextAttention(steps, l + 1)) {
      int explain = l == last ? explainNeighbours : 0;
      current =
          LayerJob.run(
              bytes,
              steps,
              l,
              current,
              parted,
              hubs,
              splitRows > 0,
              idType,
              shuffle,
              explain,
              held);
    }
    if (last < 0) {
      // No attention layer: no neighbours to name.
      for (String c : TopNeighbours.columnNames(explainNeighbours)) {
        current =
            current.withColumn(c, lit(null).cast(c.startsWith("weight") ? "float" : idType.sql()));
      }
    }
    spark.sparkContext().setJobDescription(null);
    held.add(graph);
    held.add(hubs);
    StructType out = predictionSchema(idType, model.classLabels());
    Dataset<Row> predictions =
        current.mapPartitions(
            NodeRowSteps.predictions(model.classLabels(), explainNeighbours), Encoders.row(out));
    return new SparkScores(predictions, held, splitRows, entryCount);
  }

  private StructType predictionSchema(DataType idType, List<String> labels) {
    List<StructField> fields = new ArrayList<>();
    fields.add(DataTypes.createStructField(idColumn, idType, false));
    fields.add(DataTypes.createStructField("label", DataTypes.StringType, false));
    fields.add(DataTypes.createStructField("probability", DataTypes.FloatType, false));
    for (String label : labels) {
      fields.add(DataTypes.createStructField("p_" + label, DataTypes.FloatType, false));
    }
    return TopNeighbours.addColumns(DataTypes.createStructType(fields), idType, explainNeighbours);
  }
}
