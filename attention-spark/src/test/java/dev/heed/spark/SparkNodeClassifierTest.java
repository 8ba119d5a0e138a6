package dev.heed.spark;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.io.InputStream;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;
import org.junit.jupiter.api.Test;

/**
 * The distributed classifier against single-machine Heed on the same graphs: every probability
 * within 1e-5, in Spark's local mode with two cores and two shuffle partitions.
 */
class SparkNodeClassifierTest {

  private static final double TOLERANCE = 1e-5;

  @Test
  void demoNetworkMatchesSingleMachineHeed() throws IOException {
    // A 4,000-account network from the demo's generator (the full 50,000 accounts take longer
    // than the module's test budget on two shared cores), scored with the bundled demo model, with
    // text ids and an extra edge column.
    PaymentsNetwork net = PaymentsNetworkGenerator.of(4_000, 40_000, 20261201L).generate();
    AttentionModel model = demoModel();
    int n = net.accountCount();
    int f = model.inputFeatureCount();
    float[] x = net.features();
    List<Row> featureRows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      Object[] r = new Object[f + 1];
      r[0] = net.accountId(i);
      for (int c = 0; c < f; c++) {
        r[c + 1] = (double) x[i * f + c];
      }
      featureRows.add(RowFactory.create(r));
    }
    StructType fs = new StructType().add("account", DataTypes.StringType);
    for (String name : model.featureNames()) {
      fs = fs.add(name, DataTypes.DoubleType);
    }
    int[] src = net.transferSources();
    int[] dst = net.transferTargets();
    List<Row> edgeRows = new ArrayList<>();
    for (int k = 0; k < src.length; k++) {
      edgeRows.add(RowFactory.create(net.accountId(src[k]), net.accountId(dst[k]), 1.0));
    }
    StructType es =
        new StructType()
            .add("from", DataTypes.StringType)
            .add("to", DataTypes.StringType)
            .add("amount", DataTypes.DoubleType);
    Dataset<Row> edges = LocalSpark.session().createDataFrame(LocalSpark.rdd(edgeRows), es);
    Dataset<Row> features = LocalSpark.session().createDataFrame(LocalSpark.rdd(featureRows), fs);

    SparkNodeClassifier classifier =
        SparkNodeClassifier.builder(model)
            .idColumn("account")
            .sourceColumn("from")
            .targetColumn("to")
            .build();
    GraphPolicies p = model.graphPolicies().orElseThrow();
    assertEquals(p, classifier.graphPolicies());
    float[] expected = LocalSpark.reference(model, src, dst, n, x, p);
    try (SparkScores scores = classifier.classify(LocalSpark.session(), edges, features)) {
      List<Row> rows = scores.predictions().collectAsList();
      assertEquals(n, rows.size());
      int classes = model.classLabels().size();
      int labelsAgree = 0;
      double worst = 0;
      Map<String, Integer> index = new HashMap<>();
      for (int i = 0; i < n; i++) {
        index.put(net.accountId(i), i);
      }
      for (Row r : rows) {
        int i = index.get(r.getString(0));
        int best = 0;
        for (int c = 0; c < classes; c++) {
          worst = Math.max(worst, Math.abs(r.getFloat(3 + c) - expected[i * classes + c]));
          if (expected[i * classes + c] > expected[i * classes + best]) {
            best = c;
          }
        }
        labelsAgree += model.classLabels().get(best).equals(r.getString(1)) ? 1 : 0;
      }
      assertTrue(worst <= TOLERANCE, "largest probability difference " + worst);
      assertEquals(n, labelsAgree);
    }
  }

  @Test
  void rmatGraphWithTwoLayerModelMatches() {
    RmatGenerator gen = RmatGenerator.withScale(11).edgeFactor(8).seed(11);
    int n = gen.nodeCount();
    int[] src = new int[gen.edgeCount()];
    int[] dst = new int[gen.edgeCount()];
    gen.generateInto(src, dst);
    AttentionModel model = TestModels.gatThenGatv2(3, 5, 4);
    GraphPolicies p = GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS;
    SparkScores scores = compare(model, src, dst, n, 5, p, SparkNodeClassifier.builder(model));
    assertEquals(0, scores.splitRows(), "no R-MAT row of this graph is over the default split");
    scores.close();
  }

  @Test
  void hubRowIsSplitAcrossTasksAndMergedExactly() {
    // An R-MAT background plus node 7 receiving from 3,000 sources: with rows capped at 400
    // entries, its row runs in 8 parts on different tasks.
    RmatGenerator gen = RmatGenerator.withScale(11).edgeFactor(4).seed(5);
    int n = gen.nodeCount();
    int m = gen.edgeCount();
    int hub = 3000;
    int[] src = new int[m + hub];
    int[] dst = new int[m + hub];
    int[] s0 = new int[m];
    int[] d0 = new int[m];
    gen.generateInto(s0, d0);
    System.arraycopy(s0, 0, src, 0, m);
    System.arraycopy(d0, 0, dst, 0, m);
    for (int k = 0; k < hub; k++) {
      src[m + k] = (k * 7919) % n;
      dst[m + k] = 7;
    }
    AttentionModel model = TestModels.gatThenGatv2(9, 4, 3);
    GraphPolicies p =
        new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.ADD, DuplicatePolicy.MERGE);
    try (SparkScores scores =
        compare(model, src, dst, n, 4, p, SparkNodeClassifier.builder(model).maxRowEntries(400))) {
      assertTrue(scores.splitRows() >= 1, "the hub's row was not split: " + scores.splitRows());
    }
  }

  @Test
  void graphMaskedSelfAttentionMatches() {
    RmatGenerator gen = RmatGenerator.withScale(9).edgeFactor(6).seed(2);
    int n = gen.nodeCount();
    int[] src = new int[gen.edgeCount()];
    int[] dst = new int[gen.edgeCount()];
    gen.generateInto(src, dst);
    AttentionModel model = TestModels.graphMaskedSelfAttention(4, 6, 3);
    GraphPolicies p =
        new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.AS_GIVEN, DuplicatePolicy.MERGE);
    // As-given self-loops leave some rows empty: their attention output is zero, as on one machine.
    compare(model, src, dst, n, 6, p, SparkNodeClassifier.builder(model).maxRowEntries(50)).close();
  }

  @Test
  void fullSelfAttentionIsRefusedByName() {
    AttentionModel model = TestModels.completeSelfAttention(1, 4, 2);
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class, () -> SparkNodeClassifier.builder(model).build());
    assertTrue(e.getMessage().contains("'everyone'"), e.getMessage());
    assertTrue(e.getMessage().contains("attends to every node"), e.getMessage());
  }

  /** Runs both and checks every probability; returns the (open) scores. */
  private static SparkScores compare(
      AttentionModel model,
      int[] src,
      int[] dst,
      int n,
      int width,
      GraphPolicies p,
      SparkNodeClassifier.Builder builder) {
    SplittableRandom r = new SplittableRandom(n + width);
    float[] x = TestModels.random(r, n * width, 1);
    float[] expected = LocalSpark.reference(model, src, dst, n, x, p);
    SparkScores scores =
        builder
            .graphPolicies(p)
            .build()
            .classify(
                LocalSpark.session(),
                LocalSpark.edges(src, dst),
                LocalSpark.features(x, n, width, TestModels.names(width)));
    Map<Long, float[]> got = LocalSpark.byId(scores.predictions());
    assertEquals(n, got.size());
    int classes = model.classLabels().size();
    double worst = 0;
    for (int i = 0; i < n; i++) {
      float[] row = got.get((long) i);
      assertNotNull(row, "node " + i);
      for (int c = 0; c < classes; c++) {
        worst = Math.max(worst, Math.abs(row[c] - expected[i * classes + c]));
      }
    }
    assertTrue(worst <= TOLERANCE, "largest probability difference " + worst);
    return scores;
  }

  static AttentionModel demoModel() throws IOException {
    try (InputStream in =
        SparkNodeClassifierTest.class.getResourceAsStream("/dev/heed/demo/payments-demo.heed")) {
      assertNotNull(in, "the demo model resource");
      return ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    }
  }
}
