package dev.heed.spark;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.GraphPolicies;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.apache.spark.sql.Row;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The spark-submit entry point's options, run in the tests' session on CSV files. */
class SparkScoringJobTest {

  @Test
  void csvInCsvOutMatchesSingleMachineHeed(@TempDir Path dir) throws IOException {
    int n = 300;
    SplittableRandom r = new SplittableRandom(8);
    int[] src = new int[1200];
    int[] dst = new int[1200];
    for (int k = 0; k < src.length; k++) {
      src[k] = r.nextInt(n);
      dst[k] = r.nextInt(n);
    }
    float[] x = TestModels.random(r, n * 3, 1);
    AttentionModel model =
        TestModels.gatThenGatv2(5, 3, 2)
            .withGraphPolicies(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
    Path modelFile = dir.resolve("m.heed");
    ModelFile.write(model, modelFile);
    List<String> edges = new ArrayList<>(List.of("from,to"));
    for (int k = 0; k < src.length; k++) {
      edges.add("n" + src[k] + ",n" + dst[k]);
    }
    List<String> features = new ArrayList<>(List.of("node,f0,f1,f2"));
    for (int i = 0; i < n; i++) {
      features.add("n" + i + "," + x[3 * i] + "," + x[3 * i + 1] + "," + x[3 * i + 2]);
    }
    Files.write(dir.resolve("edges.csv"), edges);
    Files.write(dir.resolve("features.csv"), features);
    String out = dir.resolve("out").toString();
    SparkScoringJob.run(
        LocalSpark.session(),
        SparkScoringJob.parse(
            new String[] {
              "--model",
              modelFile.toString(),
              "--edges",
              dir.resolve("edges.csv").toString(),
              "--edges-format",
              "csv",
              "--features",
              dir.resolve("features.csv").toString(),
              "--features-format",
              "csv",
              "--out",
              out,
              "--out-format",
              "csv",
              "--id-column",
              "node",
              "--source-column",
              "from",
              "--target-column",
              "to",
              "--explain",
              "2"
            }));
    List<Row> rows =
        LocalSpark.session()
            .read()
            .option("header", "true")
            .option("inferSchema", "true")
            .csv(out)
            .collectAsList();
    assertEquals(n, rows.size());
    assertEquals(
        List.of("neighbour_1", "weight_1", "neighbour_2", "weight_2"),
        List.of(rows.get(0).schema().fieldNames()).subList(5, 9));
    float[] expected =
        LocalSpark.reference(model, src, dst, n, x, GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
    for (Row row : rows) {
      int i = Integer.parseInt(row.getString(0).substring(1));
      for (int c = 0; c < 2; c++) {
        double got = ((Number) row.get(3 + c)).doubleValue();
        assertEquals(expected[2 * i + c], got, 1e-5, "node " + i + " class " + c);
      }
      // Every node has a self-loop, so at least one neighbour; the best comes first.
      assertTrue(row.getString(5).startsWith("n"), "node " + i + " neighbour 1: " + row.get(5));
      if (row.get(8) != null) {
        assertTrue(
            ((Number) row.get(6)).doubleValue() >= ((Number) row.get(8)).doubleValue(),
            "node " + i + " weights out of order");
      }
    }
  }

  @Test
  void conventionsOtherThanTheModelsNeedTheOverride(@TempDir Path dir) throws IOException {
    AttentionModel model =
        TestModels.gatThenGatv2(5, 3, 2)
            .withGraphPolicies(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS);
    Path modelFile = dir.resolve("m.heed");
    ModelFile.write(model, modelFile);
    Map<String, String> opts =
        SparkScoringJob.parse(
            new String[] {
              "--model",
              modelFile.toString(),
              "--edges",
              "e",
              "--features",
              "f",
              "--out",
              "o",
              "--direction",
              "keep"
            });
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class, () -> SparkScoringJob.run(LocalSpark.session(), opts));
    assertTrue(e.getMessage().contains("direction: keep instead of symmetrise"), e.getMessage());
    assertTrue(e.getMessage().contains("--override-graph-policies"), e.getMessage());
  }

  @Test
  void usageErrorsSayWhatIsWrong() {
    assertTrue(usageError().contains("missing --model, --edges, --features, --out"));
    assertTrue(usageError("--out-format", "json").contains("parquet or csv"));
    String k = usageError("--explain", "-3");
    assertTrue(k.contains("--explain must be a whole number, got '-3'"), k);
  }

  /** The message of parsing the required options (when {@code more} is not empty) and more. */
  private static String usageError(String... more) {
    List<String> args = new ArrayList<>();
    if (more.length > 0) {
      args.addAll(List.of("--model", "m", "--edges", "e", "--features", "f", "--out", "o"));
    }
    args.addAll(List.of(more));
    return assertThrows(
            IllegalArgumentException.class,
            () -> SparkScoringJob.parse(args.toArray(new String[0])))
        .getMessage();
  }
}
