package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * {@link CheckVectors}: the ones docs/export_model.py writes verify on loading, Java-made ones
 * round-trip through the file, and the factory rejects what the format rejects. Malformed check
 * entries in files are covered by {@link ModelFileTest}.
 */
class CheckVectorsTest {

  private static final Logger LOG = LoggerFactory.getLogger(CheckVectorsTest.class);

  /**
   * The fixture's check vectors were computed by docs/export_model.py's float64 NumPy forward pass
   * (an evaluation of the equations of docs/model-format.md: Veličković et al. 2018, Brody et al.
   * 2022, Vaswani et al. 2017, written independently of Heed) over the sample graph, which both
   * exporters share.
   */
  @Test
  void numpyExportedChecksVerifyOnLoading() throws IOException {
    AttentionModel model = TestModels.load(TestModels.resource("mixed.heed"));
    CheckVectors checks = model.checks().orElseThrow();
    assertEquals(CheckVectors.sampleGraph(), checks.graph(), "the exporters' shared sample graph");
    assertEquals(5, checks.featureCount());
    assertEquals(3, checks.classCount());
    assertEquals(CheckVectors.DEFAULT_TOLERANCE, checks.tolerance());
    assertTrue(checks.computedBy().contains("docs/export_model.py"), checks.computedBy());
    CheckVectors.Deviation d = checks.compareWithReference(model);
    LOG.info("NumPy check vectors, float64 reference attention: {}", d.describe("-"));
    assertTrue(d.largest() < 1e-5, d.describe("-"));
    assertTrue(d.withinTolerance());
  }

  @Test
  void javaMadeChecksRoundTripThroughTheFile() throws IOException {
    AttentionModel model = TestModels.load(TestModels.resource("mixed.heed")).withoutChecks();
    CsrGraph graph = CheckVectors.sampleGraph();
    float[] x = CheckVectors.sampleFeatures(5);
    float[] p =
        TestModels.withReferenceKernel(model).forward(graph, x, PathChoice.SPARSE, false).values();
    double[] expected = new double[p.length];
    for (int i = 0; i < p.length; i++) {
      expected[i] = p[i];
    }
    CheckVectors checks = CheckVectors.of(graph, x, 5, expected, 3, 1e-5, "a test");
    byte[] bytes = ModelFile.toBytes(model.withChecks(checks));
    AttentionModel read = TestModels.load(bytes);
    CheckVectors back = read.checks().orElseThrow();
    assertEquals(graph, back.graph());
    assertArrayEquals(x, back.features());
    assertArrayEquals(expected, back.expectedProbabilities());
    assertEquals(1e-5, back.tolerance());
    assertEquals("a test", back.computedBy());
    assertArrayEquals(bytes, ModelFile.toBytes(read), "rewriting gives the same bytes");
  }

  @Test
  void readUnverifiedKeepsChecksThatFail(@TempDir Path tmp) throws IOException {
    Path file =
        Files.write(
            tmp.resolve("transposed.heed"),
            TestModels.withTransposed(TestModels.resource("mixed.heed"), "gat2.target_weight"));
    assertThrows(ModelFormatException.class, () -> ModelFile.read(file));
    AttentionModel model = ModelFile.readUnverified(file, NpyLimits.defaults());
    CheckVectors.Deviation d = model.checks().orElseThrow().compareWithReference(model);
    LOG.info("gat2.target_weight transposed: {}", d.describe(model.classLabels().get(0)));
    assertFalse(d.withinTolerance());
    assertTrue(d.largest() > 100 * d.tolerance(), "a transposed weight moves outputs far: " + d);
  }

  @Test
  void sampleInputsAreFixedAndCoverTheEdgeCases() {
    CsrGraph g = CheckVectors.sampleGraph();
    assertEquals(8, g.nodeCount());
    assertEquals(23, g.entryCount());
    assertEquals(1, g.degree(0));
    assertTrue(g.allows(0, 0), "node 0: only its self-loop");
    assertEquals(0, g.degree(1), "node 1: no sources");
    float[] a = CheckVectors.sampleFeatures(6);
    assertArrayEquals(a, CheckVectors.sampleFeatures(6));
    assertEquals(48, a.length);
    boolean nonZero = false;
    for (float v : a) {
      assertTrue(v >= -2 && v < 2, "in [-2, 2): " + v);
      nonZero |= v != 0;
    }
    assertTrue(nonZero);
  }

  @Test
  void factoryRejectsWhatTheFormatRejects() {
    CsrGraph g = CheckVectors.sampleGraph();
    float[] x = CheckVectors.sampleFeatures(2);
    double[] p = new double[8 * 2];
    java.util.Arrays.fill(p, 0.5);
    assertEquals(8, CheckVectors.of(g, x, 2, p, 2, 1e-4, "").nodeCount());
    assertMessage(
        () ->
            CheckVectors.of(
                CsrGraph.of(new int[] {0}, new int[0]), new float[0], 2, p, 2, 1e-4, ""),
        "needs 1..256 nodes, got 0");
    assertMessage(
        () -> CheckVectors.of(g, new float[15], 2, p, 2, 1e-4, ""),
        "features must hold nodes × width = 8 × 2 = 16 values, got 15");
    float[] nan = x.clone();
    nan[5] = Float.NaN;
    assertMessage(() -> CheckVectors.of(g, nan, 2, p, 2, 1e-4, ""), "NaN at row 2, column 1");
    double[] negative = p.clone();
    negative[3] = -0.5;
    assertMessage(
        () -> CheckVectors.of(g, x, 2, negative, 2, 1e-4, ""),
        "-0.5 at row 1, column 1 is not a probability");
    assertMessage(() -> CheckVectors.of(g, x, 2, p, 2, 0, ""), "tolerance must be a number");
    assertMessage(() -> CheckVectors.of(g, x, 2, p, 2, Double.NaN, ""), "got NaN");
  }

  @Test
  void checksMustFitTheModel() throws IOException {
    AttentionModel model = TestModels.load(TestModels.resource("mixed.heed"));
    double[] p = new double[8 * 2];
    java.util.Arrays.fill(p, 0.5);
    CheckVectors twoClasses =
        CheckVectors.of(
            CheckVectors.sampleGraph(), CheckVectors.sampleFeatures(5), 5, p, 2, 1e-4, "");
    assertMessage(() -> model.withChecks(twoClasses), "do not fit a model of 5 features and 3");
    assertMessage(
        () -> twoClasses.compareWithReference(model), "the model reads 5 features and has 3");
  }

  private static void assertMessage(org.junit.jupiter.api.function.Executable call, String part) {
    IllegalArgumentException e = assertThrows(IllegalArgumentException.class, call);
    assertTrue(e.getMessage().contains(part), "expected '" + part + "' in: " + e.getMessage());
  }
}
