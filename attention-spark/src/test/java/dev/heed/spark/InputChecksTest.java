package dev.heed.spark;

import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.model.AttentionModel;
import java.util.List;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.functions;
import org.junit.jupiter.api.Test;

/** Bad input fails before any layer runs, with a message that names the problem and the fix. */
class InputChecksTest {

  private static final AttentionModel MODEL = TestModels.gatThenGatv2(1, 3, 2);
  private static final int[] SRC = {0, 1, 2, 3};
  private static final int[] DST = {1, 2, 3, 0};

  private static String failure(Dataset<Row> edges, Dataset<Row> features) {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                SparkNodeClassifier.builder(MODEL)
                    .build()
                    .classify(LocalSpark.session(), edges, features)
                    .close());
    return e.getMessage();
  }

  private static Dataset<Row> features(float... x) {
    return LocalSpark.features(x, x.length / 3, 3, TestModels.names(3));
  }

  private static final float[] GOOD = {1, 2, 3, 4, 5, 6, 7, 8, 9, 1, 1, 1};

  @Test
  void missingEdgeColumnIsNamed() {
    String m =
        failure(LocalSpark.edges(SRC, DST).withColumnRenamed("target", "to"), features(GOOD));
    assertTrue(m.contains("no column 'target'") && m.contains("to"), m);
  }

  @Test
  void missingFeatureColumnIsNamed() {
    String m = failure(LocalSpark.edges(SRC, DST), features(GOOD).drop("f1"));
    assertTrue(m.contains("[f1]"), m);
  }

  @Test
  void featureCountOtherThanTheModelsIsRefused() {
    AttentionModel wide = TestModels.gatThenGatv2(1, 4, 2);
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                SparkNodeClassifier.builder(wide)
                    .featureColumns(List.of("f0", "f1", "f2"))
                    .build()
                    .classify(LocalSpark.session(), LocalSpark.edges(SRC, DST), features(GOOD)));
    assertTrue(e.getMessage().contains("reads 4 features"), e.getMessage());
  }

  @Test
  void repeatedFeatureIdsAreNamed() {
    Dataset<Row> f = features(GOOD);
    String m = failure(LocalSpark.edges(SRC, DST), f.union(f.filter("id = 2")));
    assertTrue(m.contains("more than one row for id 2"), m);
  }

  @Test
  void nullOrUnknownEdgeIdsAreNamed() {
    String m = failure(LocalSpark.edges(new int[] {0, 9}, new int[] {1, 2}), features(GOOD));
    assertTrue(m.contains("without a feature row: 9"), m);
    Dataset<Row> nullTarget =
        LocalSpark.edges(SRC, DST)
            .withColumn(
                "target",
                functions
                    .when(functions.col("target").equalTo(3), functions.lit(null))
                    .otherwise(functions.col("target")));
    String n = failure(nullTarget, features(GOOD));
    assertTrue(n.contains("an edge has a null 'source' or 'target'"), n);
  }

  @Test
  void nonFiniteFeaturesAreNamed() {
    float[] x = GOOD.clone();
    x[7] = Float.NaN;
    String m = failure(LocalSpark.edges(SRC, DST), features(x));
    assertTrue(m.contains("id 2 column 'f1' = NaN"), m);
    String big =
        failure(LocalSpark.edges(SRC, DST), features(GOOD).withColumn("f0", functions.lit(1e300)));
    assertTrue(big.contains("rounding to float"), big);
  }

  @Test
  void textFeatureColumnIsRefused() {
    String m =
        failure(LocalSpark.edges(SRC, DST), features(GOOD).withColumn("f2", functions.lit("x")));
    assertTrue(m.contains("'f2' is string, not numeric"), m);
  }
}
