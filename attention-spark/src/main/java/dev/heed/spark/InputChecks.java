package dev.heed.spark;

import static org.apache.spark.sql.functions.col;
import static org.apache.spark.sql.functions.isnan;

import dev.heed.model.AttentionModel;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.stream.Collectors;
import org.apache.spark.sql.Column;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.types.DataType;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.NumericType;
import org.apache.spark.sql.types.StructField;

/**
 * The checks {@link SparkNodeClassifier} makes before any layer runs. Schema checks cost nothing;
 * the data checks are small Spark jobs (a scan of the features, a join of the edges' ids with the
 * features' ids), each bringing at most {@link #SHOWN} offending rows to the driver.
 */
final class InputChecks {

  /** Offending ids named in a message. */
  static final int SHOWN = 5;

  private InputChecks() {}

  /** The feature columns to read, checked against the frame and the model. */
  static List<String> featureColumns(
      AttentionModel model, Dataset<Row> features, String id, List<String> given) {
    List<String> present = Arrays.asList(features.columns());
    requireColumn(features, "features", id, "the id column (idColumn / --id-column)");
    List<String> columns;
    if (given != null) {
      columns = given;
    } else if (!model.featureNames().isEmpty()) {
      columns = model.featureNames();
    } else {
      columns = new ArrayList<>(present);
      columns.remove(id);
    }
    List<String> missing = new ArrayList<>();
    for (String c : columns) {
      if (!present.contains(c)) {
        missing.add(c);
      }
    }
    if (!missing.isEmpty()) {
      throw new IllegalArgumentException(
          "the features frame has no column "
              + missing
              + " (it has "
              + present
              + "); the model's features are "
              + (model.featureNames().isEmpty() ? "unnamed" : model.featureNames())
              + "; rename the columns or name them with featureColumns / --feature-columns");
    }
    if (columns.size() != model.inputFeatureCount()) {
      throw new IllegalArgumentException(
          "the model reads "
              + model.inputFeatureCount()
              + " features per node, but "
              + columns.size()
              + " feature columns were given: "
              + columns
              + "; pass exactly the model's features (featureColumns / --feature-columns)");
    }
    for (String c : columns) {
      DataType t = features.schema().apply(c).dataType();
      if (!(t instanceof NumericType)) {
        throw new IllegalArgumentException(
            "feature column '"
                + c
                + "' is "
                + t.simpleString()
                + ", not numeric; cast it to float or double before classifying");
      }
    }
    return List.copyOf(columns);
  }

  /**
   * A CSV features frame (every column text) with every column but the id cast to double; a field
   * that is not a number becomes null and fails {@link #checkNodes} by name.
   */
  static Dataset<Row> numericFeatures(Dataset<Row> features, String id) {
    List<Column> cols = new ArrayList<>();
    for (String c : features.columns()) {
      cols.add(c.equals(id) ? col(c) : col(c).cast(DataTypes.DoubleType).as(c));
    }
    return features.select(cols.toArray(new Column[0]));
  }

  static DataType idType(Dataset<Row> features, String id) {
    return features.schema().apply(id).dataType();
  }

  /** (id, feature columns as float). */
  static Dataset<Row> castFeatures(Dataset<Row> features, String id, List<String> columns) {
    List<Column> cols = new ArrayList<>();
    cols.add(col(id));
    for (String c : columns) {
      cols.add(col(c).cast(DataTypes.FloatType).as(c));
    }
    return features.select(cols.toArray(new Column[0]));
  }

  /** (src, dst) in the features' id type; fails on a missing column. */
  static Dataset<Row> castEdges(Dataset<Row> edges, String source, String target, DataType idType) {
    requireColumn(edges, "edges", source, "the source column (sourceColumn / --source-column)");
    requireColumn(edges, "edges", target, "the target column (targetColumn / --target-column)");
    return edges.select(col(source).cast(idType).as("src"), col(target).cast(idType).as("dst"));
  }

  /** Null or repeated ids, null or non-finite features (after rounding to float). */
  static void checkNodes(Dataset<Row> features, String id, List<String> columns) {
    // Null ids and bad values in one pass over the features.
    Column bad = col(id).isNull();
    for (String c : columns) {
      bad =
          bad.or(col(c).isNull())
              .or(isnan(col(c)))
              .or(col(c).equalTo(Float.POSITIVE_INFINITY))
              .or(col(c).equalTo(Float.NEGATIVE_INFINITY));
    }
    List<Row> rows = features.filter(bad).limit(SHOWN).collectAsList();
    if (rows.stream().anyMatch(r -> r.isNullAt(0))) {
      throw new IllegalArgumentException(
          "the features frame has a row whose id ('" + id + "') is null; drop or fix it");
    }
    if (!rows.isEmpty()) {
      List<String> where = new ArrayList<>();
      for (Row r : rows) {
        for (int c = 0; c < columns.size(); c++) {
          Object v = r.get(c + 1);
          if (v == null || !Float.isFinite((Float) v)) {
            where.add("id " + r.get(0) + " column '" + columns.get(c) + "' = " + v);
            break;
          }
        }
      }
      throw new IllegalArgumentException(
          "features must be finite numbers (after rounding to float); found "
              + String.join(", ", where)
              + "; fill or drop those values before classifying");
    }
    List<Row> repeated =
        features.groupBy(col(id)).count().filter(col("count").gt(1)).limit(SHOWN).collectAsList();
    if (!repeated.isEmpty()) {
      throw new IllegalArgumentException(
          "the features frame has more than one row for id "
              + repeated.stream()
                  .map(r -> r.get(0) + " (" + r.getLong(1) + " rows)")
                  .collect(Collectors.joining(", "))
              + "; each node needs exactly one feature row");
    }
  }

  /** Null edge ids, and edge ids without a feature row. */
  static void checkEdges(
      Dataset<Row> edges, Dataset<Row> features, String id, String source, String target) {
    // One pass over the edges: their distinct ids (reduced before the shuffle) that match no
    // feature row; a null id matches none either.
    Dataset<Row> ids =
        edges.select(col("src").as("node")).union(edges.select(col("dst").as("node"))).distinct();
    Dataset<Row> known = features.select(col(id).as("node"));
    List<Row> unknown =
        ids.join(known, ids.col("node").equalTo(known.col("node")), "left_anti")
            .limit(SHOWN)
            .collectAsList();
    if (unknown.stream().anyMatch(r -> r.isNullAt(0))) {
      throw new IllegalArgumentException(
          "an edge has a null '"
              + source
              + "' or '"
              + target
              + "', or an id that is not of the features' id type; drop or fix it");
    }
    if (!unknown.isEmpty()) {
      throw new IllegalArgumentException(
          "the edges name nodes without a feature row: "
              + unknown.stream()
                  .map(r -> String.valueOf(r.get(0)))
                  .collect(Collectors.joining(", "))
              + (unknown.size() == SHOWN ? " and maybe more" : "")
              + "; add their features or drop their edges");
    }
  }

  private static void requireColumn(Dataset<Row> frame, String what, String name, String role) {
    for (StructField f : frame.schema().fields()) {
      if (f.name().equals(name)) {
        return;
      }
    }
    throw new IllegalArgumentException(
        "the "
            + what
            + " frame has no column '"
            + name
            + "' for "
            + role
            + "; it has "
            + Arrays.toString(frame.columns()));
  }
}
