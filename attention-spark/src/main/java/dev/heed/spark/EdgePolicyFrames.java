package dev.heed.spark;

import static org.apache.spark.sql.functions.col;

import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import java.util.List;
import java.util.stream.Collectors;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;

/**
 * Builds the attention graph's entries (src, dst) from an edge frame as {@link
 * dev.heed.graph.CsrGraphBuilder} builds a CSR graph: {@code symmetrise} adds j → i for every i → j
 * (a self-loop once); {@code reject} fails on an edge given twice (an undirected one, when
 * symmetrised, in either direction), {@code merge} keeps it once; {@code add} gives every node
 * exactly one self-loop, whether or not the edges had one, {@code as-given} keeps the edges' own.
 */
final class EdgePolicyFrames {

  private EdgePolicyFrames() {}

  /**
   * @param edges (src, dst), ids checked
   * @param nodes (id) of every node
   */
  static Dataset<Row> apply(Dataset<Row> edges, Dataset<Row> nodes, GraphPolicies policies) {
    Dataset<Row> e = edges.select(col("src"), col("dst"));
    if (policies.direction() == DirectionPolicy.SYMMETRISE) {
      e =
          e.unionByName(
              e.filter(col("src").notEqual(col("dst")))
                  .select(col("dst").as("src"), col("src").as("dst")));
    }
    if (policies.duplicates() == DuplicatePolicy.REJECT) {
      List<Row> repeated =
          e.groupBy("src", "dst").count().filter(col("count").gt(1)).limit(5).collectAsList();
      if (!repeated.isEmpty()) {
        throw new IllegalArgumentException(
            "duplicate edges under the 'reject' convention (source -> target, times given"
                + (policies.direction() == DirectionPolicy.SYMMETRISE ? ", either direction" : "")
                + "): "
                + repeated.stream()
                    .map(r -> r.get(0) + " -> " + r.get(1) + " (" + r.getLong(2) + ")")
                    .collect(Collectors.joining(", "))
                + "; remove the repeats or build with duplicates 'merge'");
      }
    }
    if (policies.selfLoops() == SelfLoopPolicy.ADD) {
      e = e.filter(col("src").notEqual(col("dst")));
      if (policies.duplicates() == DuplicatePolicy.MERGE) {
        e = e.distinct();
      }
      return e.unionByName(nodes.select(col("id").as("src"), col("id").as("dst")));
    }
    return policies.duplicates() == DuplicatePolicy.MERGE ? e.distinct() : e;
  }
}
