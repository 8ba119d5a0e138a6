package dev.heed.spark;

import static org.apache.spark.sql.functions.broadcast;
import static org.apache.spark.sql.functions.coalesce;
import static org.apache.spark.sql.functions.col;
import static org.apache.spark.sql.functions.explode;
import static org.apache.spark.sql.functions.lit;
import static org.apache.spark.sql.functions.sequence;
import static org.apache.spark.sql.functions.when;

import dev.heed.model.LayerSteps;
import java.util.ArrayList;
import java.util.List;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Column;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Encoders;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.types.DataType;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;
import org.apache.spark.storage.StorageLevel;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/** One attention layer as Spark steps; see {@link SparkNodeClassifier} for the plan. */
final class LayerJob {

  private static final Logger LOG = LoggerFactory.getLogger(LayerJob.class);

  private LayerJob() {}

  /**
   * Runs attention layer {@code l} (and the per-node layers up to the next attention layer) over
   * {@code nodes} (id, x); returns the persisted, materialised (id, next x), followed by the {@link
   * TopNeighbours} columns when {@code explain} k &gt; 0. {@code split} says whether any row is
   * split ({@code hubs} is not empty). {@code held} holds the previous layer's persisted frames:
   * they are released once this one is materialised, and this layer's output takes their place.
   */
  static Dataset<Row> run(
      Broadcast<byte[]> model,
      LayerSteps steps,
      int l,
      Dataset<Row> nodes,
      Dataset<Row> parted,
      Dataset<Row> hubs,
      boolean split,
      DataType idType,
      int partitions,
      int explain,
      List<Dataset<?>> held) {
    long started = System.nanoTime();
    String name = steps.model().layers().get(l).name();
    // Names this layer's jobs in Spark's UI and event log (and in listeners' job properties).
    nodes.sparkSession().sparkContext().setJobDescription("heed layer " + l + " '" + name + "'");
    StructType projected =
        new StructType()
            .add("id", idType, false)
            .add("x", DataTypes.BinaryType, false)
            .add("q", DataTypes.BinaryType, false)
            .add("kv", DataTypes.BinaryType, false);
    Dataset<Row> proj =
        nodes
            .mapPartitions(new ProjectStep(model, l, l), Encoders.row(projected))
            .persist(StorageLevel.MEMORY_AND_DISK());

    // Entries: each edge with its source's key and value rows, to its target's part.
    Dataset<Row> sources = proj.select(col("id").as("src"), col("kv"));
    Dataset<Row> entries =
        parted
            .join(sources, "src")
            .select(
                col("dst"),
                col("part"),
                lit(RowBlockAttention.TAG_ENTRY).as("tag"),
                col("kv").as("vec"),
                lit(null).cast(DataTypes.BinaryType).as("x"),
                lit(0).as("parts"),
                col("src"));
    // Query records: one per target and part (parts of a split row each need the query); the
    // layer input rides with part 0 only.
    Dataset<Row> targets =
        split
            ? proj.join(broadcast(hubs), col("id").equalTo(col("hub")), "left")
                .select(
                    col("id").as("dst"),
                    col("q"),
                    col("x"),
                    coalesce(col("parts"), lit(1)).as("parts"))
            : proj.select(col("id").as("dst"), col("q"), col("x"), lit(1).as("parts"));
    Dataset<Row> queries =
        targets
            .select(
                col("dst"),
                explode(sequence(lit(0), col("parts").minus(1))).as("part"),
                col("q"),
                col("x"),
                col("parts"))
            .select(
                col("dst"),
                col("part"),
                lit(RowBlockAttention.TAG_QUERY).as("tag"),
                col("q").as("vec"),
                when(col("part").equalTo(0), col("x")).as("x"),
                col("parts"),
                lit(null).cast(idType).as("src"));
    if (explain == 0) {
      entries = entries.drop("src"); // the source id rides along only to name top neighbours
      queries = queries.drop("src");
    }
    Dataset<Row> parts =
        queries
            .unionByName(entries)
            .repartition(partitions, col("dst"), col("part"))
            .sortWithinPartitions("dst", "part", "tag");
    StructType attendedSchema =
        TopNeighbours.addColumns(
            new StructType()
                .add("id", idType, false)
                .add("kind", DataTypes.IntegerType, false)
                .add("part", DataTypes.IntegerType, false)
                .add("x", DataTypes.BinaryType, true)
                .add("state", DataTypes.BinaryType, true),
            idType,
            explain);
    Dataset<Row> attended =
        parts
            .mapPartitions(new RowBlockAttention(model, l, explain), Encoders.row(attendedSchema))
            .persist(StorageLevel.MEMORY_AND_DISK());

    List<Column> out = new ArrayList<>(List.of(col("id"), col("x")));
    TopNeighbours.columnNames(explain).forEach(c -> out.add(col(c)));
    Column[] outColumns = out.toArray(new Column[0]);
    Dataset<Row> next =
        attended.filter(col("kind").equalTo(RowBlockAttention.FINAL)).select(outColumns);
    Dataset<Row> merged = null;
    if (split) {
      StructType mergedSchema =
          new StructType().add("id", idType, false).add("x", DataTypes.BinaryType, false);
      if (explain > 0) {
        mergedSchema = mergedSchema.add("state", DataTypes.BinaryType, false);
      }
      merged =
          attended
              .filter(col("kind").equalTo(RowBlockAttention.PARTIAL))
              .repartition(partitions, col("id"))
              .sortWithinPartitions("id", "part")
              .mapPartitions(new SplitRowMerge(model, l, explain > 0), Encoders.row(mergedSchema))
              .persist(StorageLevel.MEMORY_AND_DISK());
      Dataset<Row> mergedRows = merged.select(col("id"), col("x"));
      if (explain > 0) {
        mergedRows =
            mergedRows.join(
                splitRowNeighbours(
                    model, l, merged, proj, parted, hubs, idType, partitions, explain),
                "id");
      }
      next = next.unionByName(mergedRows);
    }
    next = next.persist(StorageLevel.MEMORY_AND_DISK());
    long rows = next.count();
    // The previous layer's frames (and this one's intermediates) are no longer read.
    for (Dataset<?> d : held) {
      d.unpersist(false);
    }
    held.clear();
    proj.unpersist(false);
    attended.unpersist(false);
    if (merged != null) {
      merged.unpersist(false);
    }
    held.add(next);
    LOG.info(
        "layer {} ('{}'): {} rows in {} ms",
        l,
        name,
        rows,
        (System.nanoTime() - started) / 1_000_000);
    return next;
  }

  /**
   * The top neighbours of split rows, (id, neighbour_1, weight_1, ...): each split row's entries
   * meet its key and value rows, its target's query row and merged state (a broadcast of one record
   * per split row), each task keeps its k best per row, and the candidates, shuffled by target, are
   * reduced to the k best.
   */
  private static Dataset<Row> splitRowNeighbours(
      Broadcast<byte[]> model,
      int l,
      Dataset<Row> merged,
      Dataset<Row> proj,
      Dataset<Row> parted,
      Dataset<Row> hubs,
      DataType idType,
      int partitions,
      int k) {
    Dataset<Row> splitTargets =
        merged
            .select(col("id").as("dst"), col("state"))
            .join(proj.select(col("id").as("dst"), col("q")), "dst");
    Dataset<Row> splitEntries =
        parted
            .join(broadcast(hubs), col("dst").equalTo(col("hub")), "left_semi")
            .join(proj.select(col("id").as("src"), col("kv")), "src")
            .join(broadcast(splitTargets), "dst")
            .select(col("dst"), col("src"), col("kv"), col("q"), col("state"));
    StructType candidate =
        new StructType()
            .add("dst", idType, false)
            .add("src", idType, false)
            .add("weight", DataTypes.FloatType, false);
    return splitEntries
        .mapPartitions(TopNeighbours.candidates(model, l, k), Encoders.row(candidate))
        .repartition(partitions, col("dst"))
        .sortWithinPartitions("dst")
        .mapPartitions(
            TopNeighbours.best(k),
            Encoders.row(
                TopNeighbours.addColumns(new StructType().add("id", idType, false), idType, k)));
  }
}
