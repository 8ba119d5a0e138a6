package dev.heed.integration;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerRun;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;

/**
 * A service that depends on {@code attention-core} and {@code attention-sparse} alone: no ND4J on
 * its class path, and the bundled demo classified as the full build classifies it. The expected
 * probabilities ({@code demo-probabilities.csv}, every 250th account) were written by the full
 * build, whose projections ran on BLAS; here they run in plain Java, so agreement is to float32
 * rounding, not bit for bit.
 */
class CoreAndSparseOnlyTest {

  private static PaymentsNetwork network;
  private static CsrGraph graph;
  private static NodeFeatures features;
  private static AttentionModel model;

  @BeforeAll
  static void loadDemo() throws IOException {
    network = PaymentsNetworkGenerator.bundledDemo().generate();
    graph = DemoGraph.build(network);
    features =
        NodeFeatures.ofRowMajor(
            network.features(), network.accountCount(), network.featureNames().size());
    try (InputStream in =
        CoreAndSparseOnlyTest.class.getResourceAsStream("/dev/heed/demo/payments-demo.heed")) {
      model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    }
  }

  @Test
  void noNativeLibraryIsOnTheClassPath() {
    assertThrows(ClassNotFoundException.class, () -> Class.forName("org.nd4j.linalg.factory.Nd4j"));
    IllegalStateException noDense =
        assertThrows(
            IllegalStateException.class,
            () -> AttentionKernels.forPath(ComputePath.DENSE, KernelOptions.defaults()));
    assertTrue(noDense.getMessage().contains("dev.heed:attention-dense"), noDense.getMessage());
  }

  @Test
  void classifiesTheDemoAsTheFullBuildDoes() throws IOException {
    for (PathChoice path : List.of(PathChoice.SPARSE, PathChoice.AUTO)) {
      Classification result =
          NodeClassifier.of(model, ClassifyOptions.defaults().withPath(path))
              .classify(graph, features);
      for (LayerRun run : result.layerRuns()) {
        assertTrue(run.path().isEmpty() || run.path().get() == ComputePath.SPARSE, run.toString());
      }
      List<double[]> expected = expectedRows();
      assertEquals(200, expected.size());
      double worst = 0;
      for (double[] row : expected) {
        int account = (int) row[0];
        float[] p = result.forNode(account).probabilities();
        for (int c = 0; c < p.length; c++) {
          worst = Math.max(worst, Math.abs(p[c] - row[c + 1]));
        }
        int top = 0;
        for (int c = 1; c < p.length; c++) {
          if (row[c + 1] > row[top + 1]) {
            top = c;
          }
        }
        assertEquals(top, result.forNode(account).labelIndex(), "account " + account);
      }
      assertTrue(worst < 1e-5, path + ": largest probability difference " + worst);
    }
  }

  private static List<double[]> expectedRows() throws IOException {
    List<double[]> rows = new ArrayList<>();
    try (BufferedReader reader =
        new BufferedReader(
            new InputStreamReader(
                CoreAndSparseOnlyTest.class.getResourceAsStream("demo-probabilities.csv"),
                StandardCharsets.UTF_8))) {
      for (String line = reader.readLine(); line != null; line = reader.readLine()) {
        if (!line.startsWith("#")) {
          String[] f = line.split(",");
          double[] row = new double[f.length];
          for (int i = 0; i < f.length; i++) {
            row[i] = Double.parseDouble(f[i]);
          }
          rows.add(row);
        }
      }
    }
    return rows;
  }
}
