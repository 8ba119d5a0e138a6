package dev.heed.attention;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.internal.CostRegime;
import dev.heed.attention.internal.CostRegime.CallSize;
import dev.heed.graph.CompletePattern;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.NoSuchFileException;
import java.nio.file.Path;
import java.util.Map;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The cost model's predictions and rules with synthetic coefficients, and the profile file. */
class PathCostsTest {

  private static final ScoreFunction DOT = ScoreFunction.scaledDotProduct();
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
  private static final HeadShape DOT_4X16 = new HeadShape(4, 16, 16);

  @TempDir Path dir;

  @Test
  void predictionsAreTheSumOfCoefficientTimesWork() {
    PathCosts costs = SyntheticCosts.linear(1e-4, 2e-9, 1e-5, 8e-9);
    int n = 1000;
    long e = 50_000;
    PathEstimate est = costs.estimate(n, e, false, DOT, DOT_4X16, 1);
    assertEquals(1e-4 + 2e-9 * n * (double) n * 4, est.denseSeconds(), 1e-12);
    assertEquals(1e-5 + 8e-9 * e * 4, est.sparseSeconds(), 1e-12);
    assertEquals(ComputePath.SPARSE, est.faster());
    // E = n² on the complete pattern: dense (2e-9) beats sparse (8e-9) per element
    assertEquals(
        ComputePath.DENSE, costs.estimate(CompletePattern.of(n), DOT, DOT_4X16, 1).faster());
  }

  @Test
  void crossoverDensityIsWhereThePredictionsMeet() {
    // no fixed costs: dense 2e-9·n²H, sparse 8e-9·E·H, so they meet at E/n² = 0.25
    PathCosts costs = SyntheticCosts.linear(0, 2e-9, 0, 8e-9);
    assertEquals(0.25, costs.crossoverDensity(4096, DOT, DOT_4X16, 1), 1e-4);
    assertEquals(
        1.0, SyntheticCosts.linear(0, 1e-8, 0, 1e-9).crossoverDensity(64, DOT, DOT_4X16, 1));
    assertEquals(
        1.0 / 64,
        SyntheticCosts.linear(0, 1e-12, 0, 1e-6).crossoverDensity(64, DOT, DOT_4X16, 1),
        1e-12);
  }

  @Test
  void threadsDivideTheParallelTermsOnly() {
    PathCosts costs = SyntheticCosts.linear(1e-3, 1e-9, 1e-3, 1e-8);
    // a large call uses both threads; efficiency 1 halves the entry term, not the fixed one
    PathEstimate one = costs.estimate(100_000, 10_000_000, false, DOT, DOT_4X16, 1);
    PathEstimate two = costs.estimate(100_000, 10_000_000, false, DOT, DOT_4X16, 2);
    assertEquals((one.sparseSeconds() - 1e-3) / 2, two.sparseSeconds() - 1e-3, 1e-12);
    // a call below the kernel's per-thread cost runs on one thread whatever is allowed
    PathEstimate small1 = costs.estimate(100, 1000, false, DOT, DOT_4X16, 1);
    PathEstimate small8 = costs.estimate(100, 1000, false, DOT, DOT_4X16, 8);
    assertEquals(small1.sparseSeconds(), small8.sparseSeconds(), 0.0);
  }

  @Test
  void regimesFollowTheSparseKernelsRules() {
    HeadShape gat8x8 = new HeadShape(8, 1, 8);
    int packedNodes = (int) (CostRegime.PACKED_TABLE_MIN_BYTES / CostRegime.PACKED_ROW_BYTES) + 1;
    assertEquals(CostRegime.DENSE, regime(ComputePath.DENSE, 10, 10, false, GAT, gat8x8));
    assertEquals(
        CostRegime.SPARSE_ALL_HEADS, regime(ComputePath.SPARSE, 1000, 5000, false, GAT, gat8x8));
    assertEquals(
        CostRegime.SPARSE_ALL_HEADS_PACKED,
        regime(ComputePath.SPARSE, packedNodes, 5L * packedNodes, false, GAT, gat8x8));
    assertEquals(
        CostRegime.SPARSE_ALL_HEADS,
        regime(ComputePath.SPARSE, packedNodes - 2, 5L * packedNodes, false, GAT, gat8x8));
    assertEquals(
        CostRegime.SPARSE_PER_HEAD_ADDITIVE,
        regime(ComputePath.SPARSE, 1000, 5000, false, GAT, new HeadShape(4, 1, 16)));
    assertEquals(
        CostRegime.SPARSE_PER_HEAD_DOT,
        regime(ComputePath.SPARSE, 1000, 5000, false, DOT, DOT_4X16));
    assertEquals(
        CostRegime.SPARSE_PER_HEAD_GATV2,
        regime(
            ComputePath.SPARSE,
            1000,
            5000,
            false,
            ScoreFunction.gatv2(0.2f, new float[64]),
            DOT_4X16));
  }

  private static CostRegime regime(
      ComputePath path, int n, long e, boolean complete, ScoreFunction s, HeadShape shape) {
    return CostRegime.of(path, new CallSize(n, e, complete, s, shape, 2));
  }

  @Test
  void completePatternEntriesHaveATermOfTheirOwnAndOlderProfilesReadItAsACsrEntry()
      throws IOException {
    // synthetic coefficients: per-head CSR entries cost 4e-9 s per E·H·(dk + dv) (rows computed
    // whole or in blocks), complete-pattern entries 1e-9; everything else 0
    Map<CostRegime, double[]> c = new java.util.EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      if (r.terms().contains(CostRegime.COMPLETE_ENTRY_WIDTH)) {
        k[r.terms().indexOf(CostRegime.ENTRY_WIDTH)] = 4e-9;
        if (r.terms().contains(CostRegime.WHOLE_ROW_ENTRY_WIDTH)) {
          k[r.terms().indexOf(CostRegime.WHOLE_ROW_ENTRY_WIDTH)] = 4e-9;
        }
        k[r.terms().indexOf(CostRegime.COMPLETE_ENTRY_WIDTH)] = 1e-9;
      }
      c.put(r, k);
    }
    PathCosts costs = new PathCosts(c, 1, 1.0, "synthetic", "", null, "synthetic");
    int n = 512;
    long all = (long) n * n;
    double work = all * DOT_4X16.heads() * (DOT_4X16.keyDim() + DOT_4X16.valueDim());
    assertEquals(
        4e-9 * work, costs.estimate(n, all, false, DOT, DOT_4X16, 1).sparseSeconds(), 1e-12);
    assertEquals(
        1e-9 * work, costs.estimate(n, all, true, DOT, DOT_4X16, 1).sparseSeconds(), 1e-12);

    // a profile written before the term: complete-pattern entries cost what CSR entries cost
    String older = costs.toJson().replaceAll(",\\s*\"complete_entry_width\" : [0-9.E-]+", "");
    assertTrue(!older.contains(CostRegime.COMPLETE_ENTRY_WIDTH), older);
    PathCosts read = PathCosts.read(Files.writeString(dir.resolve("older.json"), older));
    assertEquals(4e-9 * work, read.estimate(n, all, true, DOT, DOT_4X16, 1).sparseSeconds(), 1e-12);
  }

  @Test
  void wholeRowEntriesHaveATermOfTheirOwnAndOlderProfilesReadItAsACsrEntry() throws IOException {
    // synthetic coefficients: per-head CSR entries in blocks cost 4e-9 s per E·H·(dk + dv), in rows
    // computed whole 1e-9; everything else 0
    Map<CostRegime, double[]> c = new java.util.EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      if (r.terms().contains(CostRegime.WHOLE_ROW_ENTRY_WIDTH)) {
        k[r.terms().indexOf(CostRegime.ENTRY_WIDTH)] = 4e-9;
        k[r.terms().indexOf(CostRegime.WHOLE_ROW_ENTRY_WIDTH)] = 1e-9;
      }
      c.put(r, k);
    }
    PathCosts costs = new PathCosts(c, 1, 1.0, "synthetic", "", null, "synthetic");
    int n = 4096;
    int width = DOT_4X16.heads() * (DOT_4X16.keyDim() + DOT_4X16.valueDim());
    long shortRows = (long) n * CostRegime.WHOLE_ROW_MAX_ENTRIES;
    long longRows = shortRows + n;
    assumeTrue(
        CostRegime.takesWholeRows(new CallSize(n, shortRows, false, DOT, DOT_4X16, 1)),
        "whole rows need the Vector API loops");
    assertEquals(
        1e-9 * shortRows * width,
        costs.estimate(n, shortRows, false, DOT, DOT_4X16, 1).sparseSeconds(),
        1e-12);
    assertEquals(
        4e-9 * longRows * width,
        costs.estimate(n, longRows, false, DOT, DOT_4X16, 1).sparseSeconds(),
        1e-12);
    // other shapes and scores take blocks
    HeadShape dot4x4 = new HeadShape(4, 4, 4);
    assertEquals(
        4e-9 * shortRows * 4 * 8,
        costs.estimate(n, shortRows, false, DOT, dot4x4, 1).sparseSeconds(),
        1e-12);

    // a profile written before the term: whole rows' entries cost what other CSR entries cost
    String older = costs.toJson().replaceAll(",\\s*\"whole_row_entry_width\" : [0-9.E-]+", "");
    assertTrue(!older.contains(CostRegime.WHOLE_ROW_ENTRY_WIDTH), older);
    PathCosts read = PathCosts.read(Files.writeString(dir.resolve("older-rows.json"), older));
    assertEquals(
        4e-9 * shortRows * width,
        read.estimate(n, shortRows, false, DOT, DOT_4X16, 1).sparseSeconds(),
        1e-12);
  }

  @Test
  void entriesFromBeyondTheCacheCostMoreAndOlderProfilesReadThatAsNothing() throws IOException {
    // synthetic coefficients: per-head CSR entries cost 4e-9 s per E·H·(dk + dv), those of rows
    // beyond the second-level cache 2e-9 more per share of the table beyond it; everything else 0
    Map<CostRegime, double[]> c = new java.util.EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      if (r.terms().contains(CostRegime.FAR_ENTRY_WIDTH)) {
        k[r.terms().indexOf(CostRegime.ENTRY_WIDTH)] = 4e-9;
        k[r.terms().indexOf(CostRegime.FAR_ENTRY_WIDTH)] = 2e-9;
      }
      c.put(r, k);
    }
    PathCosts costs = new PathCosts(c, 1, 1.0, "synthetic", "", null, "synthetic");
    HeadShape add4x16 = new HeadShape(4, 1, 16);
    ScoreFunction additive = ScoreFunction.additive(0.2f);
    int width = 4 * 17;
    long l2 = dev.heed.attention.internal.CacheSizes.l2Bytes();
    // a table of about 8 × the cache: about seven eighths of the reads miss it
    int n = (int) (8 * l2 / (4L * width));
    long e = 8L * n;
    double far = 1 - l2 / (4.0 * n * width);
    assertEquals(7.0 / 8, far, 0.01);
    assertEquals(
        (4e-9 + 2e-9 * far) * e * width,
        costs.estimate(n, e, false, additive, add4x16, 1).sparseSeconds(),
        1e-9 * 4e-9 * e * width);
    // a table within the cache
    int small = (int) (l2 / (8L * width));
    assertEquals(
        4e-9 * 8L * small * width,
        costs.estimate(small, 8L * small, false, additive, add4x16, 1).sparseSeconds(),
        1e-12);

    // a profile written before the term: no extra cost
    String older = costs.toJson().replaceAll(",\\s*\"far_entry_width\" : [0-9.E-]+", "");
    assertTrue(!older.contains(CostRegime.FAR_ENTRY_WIDTH), older);
    PathCosts read = PathCosts.read(Files.writeString(dir.resolve("older-far.json"), older));
    assertEquals(
        4e-9 * e * width,
        read.estimate(n, e, false, additive, add4x16, 1).sparseSeconds(),
        1e-9 * 4e-9 * e * width);
  }

  @Test
  void splitDenseCallsPriceTheirProductsApartAndOlderProfilesReadTheLargeTerm() throws IOException {
    // synthetic coefficients: large calls' products 1e-11 s per n²·H·(dk + dv), split calls'
    // 5e-12; everything else 0
    Map<CostRegime, double[]> c = new java.util.EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      if (r == CostRegime.DENSE) {
        k[r.terms().indexOf(CostRegime.PRODUCT)] = 1e-11;
        k[r.terms().indexOf(CostRegime.SPLIT_PRODUCT)] = 5e-12;
      }
      c.put(r, k);
    }
    PathCosts costs = new PathCosts(c, 2, 1.0, "synthetic", "", null, "synthetic");
    double work = DOT_4X16.heads() * (DOT_4X16.keyDim() + DOT_4X16.valueDim());
    // 2896² < 2^23 <= 2897²
    assertEquals(
        1e-11 * 2896.0 * 2896 * work,
        costs.estimate(2896, 2896L * 2896, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
    assertEquals(
        5e-12 * 2897.0 * 2897 * work,
        costs.estimate(2897, 2897L * 2897, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
    // GATv2 calls do not split
    ScoreFunction gatv2 = ScoreFunction.gatv2(0.2f, new float[64]);
    assertEquals(
        1e-11 * 2897.0 * 2897 * work,
        costs.estimate(2897, 2897L * 2897, true, gatv2, DOT_4X16, 2).denseSeconds(),
        1e-12);

    // a profile written before the term: split calls' products cost what large ones cost
    String older = costs.toJson().replaceAll(",\\s*\"split_product\" : [0-9.E-]+", "");
    assertTrue(!older.contains(CostRegime.SPLIT_PRODUCT), older);
    PathCosts read = PathCosts.read(Files.writeString(dir.resolve("older-split.json"), older));
    assertEquals(
        1e-11 * 2897.0 * 2897 * work,
        read.estimate(2897, 2897L * 2897, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
  }

  @Test
  void smallDenseCallsPriceTheirProductsOnOneThreadAndOlderProfilesReadTheLargeTerm()
      throws IOException {
    // synthetic coefficients: large calls' products 1e-11 s per n²·H·(dk + dv), small calls'
    // 3e-11, softmax elements 1e-9 per n²·H (parallel); everything else 0
    Map<CostRegime, double[]> c = new java.util.EnumMap<>(CostRegime.class);
    for (CostRegime r : CostRegime.values()) {
      double[] k = new double[r.terms().size()];
      if (r == CostRegime.DENSE) {
        k[r.terms().indexOf(CostRegime.PRODUCT)] = 1e-11;
        k[r.terms().indexOf(CostRegime.SMALL_PRODUCT)] = 3e-11;
        k[r.terms().indexOf("element")] = 1e-9;
      }
      c.put(r, k);
    }
    PathCosts costs = new PathCosts(c, 2, 1.0, "synthetic", "", null, "synthetic");
    int width = DOT_4X16.keyDim() + DOT_4X16.valueDim();
    int heads = DOT_4X16.heads();
    // n = 724 is small (724² < 2^19): one thread, so the element term is not halved
    double small = 724.0 * 724 * heads;
    assertEquals(
        3e-11 * small * width + 1e-9 * small,
        costs.estimate(724, 724L * 724, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
    // n = 725 is not: two threads share the elements at efficiency 1
    double large = 725.0 * 725 * heads;
    assertEquals(
        1e-11 * large * width + 1e-9 * large / 2,
        costs.estimate(725, 725L * 725, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
    // GATv2 calls keep their threads at any n
    ScoreFunction gatv2 = ScoreFunction.gatv2(0.2f, new float[64]);
    assertEquals(
        1e-11 * small * width + 1e-9 * small / 2,
        costs.estimate(724, 724L * 724, true, gatv2, DOT_4X16, 2).denseSeconds(),
        1e-12);

    // a profile written before the term: small calls' products cost what large ones cost
    String older = costs.toJson().replaceAll(",\\s*\"small_product\" : [0-9.E-]+", "");
    assertTrue(!older.contains(CostRegime.SMALL_PRODUCT), older);
    PathCosts read = PathCosts.read(Files.writeString(dir.resolve("older-dense.json"), older));
    assertEquals(
        1e-11 * small * width + 1e-9 * small,
        read.estimate(724, 724L * 724, true, DOT, DOT_4X16, 2).denseSeconds(),
        1e-12);
  }

  @Test
  void builtInProfileHasEveryRegimeWithPositiveCoefficients() {
    PathCosts b = PathCosts.builtIn();
    assertEquals(PathCosts.BUILT_IN_SOURCE, b.source());
    Map<String, Map<String, Double>> all = b.coefficients();
    assertEquals(CostRegime.values().length, all.size());
    for (CostRegime r : CostRegime.values()) {
      for (String term : r.terms()) {
        assertTrue(all.get(r.key()).get(term) > 0, r.key() + "." + term + " is a prior: > 0");
      }
    }
  }

  @Test
  void writeThenReadGivesTheSameProfile() throws IOException {
    PathCosts costs = SyntheticCosts.linear(1e-4, 2e-9, 1e-5, 8e-9);
    Path file = dir.resolve("sub/costs.json");
    costs.write(file);
    PathCosts back = PathCosts.read(file);
    assertEquals(costs.coefficients(), back.coefficients());
    assertEquals(costs.threads(), back.threads());
    assertEquals(costs.parallelEfficiency(), back.parallelEfficiency());
    assertEquals(file.toString(), back.source());
    assertTrue(Files.readString(file).contains("\"format\" : \"heed-path-costs\""));
  }

  @Test
  void badFilesGetErrorsNamingTheFileAndTheField() throws IOException {
    String good = SyntheticCosts.linear(1e-4, 2e-9, 1e-5, 8e-9).toJson();
    assertBad("{ not json", "not a JSON document");
    assertBad("[1, 2]", "expected a JSON object");
    assertBad("{\"format\": \"some-other-tool\", \"version\": 1}", "not a Heed path-cost profile");
    assertBad(good.replace("\"version\" : 1", "\"version\" : 2"), "written by a newer Heed");
    assertBad(good.replace("\"threads\" : 1", "\"threads\" : 0"), "\"threads\" must be at least 1");
    assertBad(good.replace("\"sparse_all_heads\"", "\"sparse_everything\""), "unknown regime");
    assertBad(good.replace("\"entry_width\"", "\"entry_widht\""), "has no term \"entry_widht\"");
    assertBad(
        good.replace("\"element\" : 2.0E-9", "\"element\" : -2.0E-9"), "regimes.dense.element");
    assertBad(
        good.replace("\"parallel_efficiency\" : 1.0", "\"parallel_efficiency\" : 1.5"), "[0, 1]");
    assertBad(good.replace("\"calibrated_at\"", "\"colour\""), "unknown field \"colour\"");
  }

  private void assertBad(String text, String expected) throws IOException {
    Path file = Files.writeString(dir.resolve("bad.json"), text);
    PathCostsFormatException e =
        assertThrows(PathCostsFormatException.class, () -> PathCosts.read(file));
    assertTrue(e.getMessage().startsWith(file.toString()), e.getMessage());
    assertTrue(e.getMessage().contains(expected), e.getMessage());
  }

  @Test
  void aNamedFileMustBeValidButABadDefaultFileFallsBackToTheBuiltIn() throws IOException {
    Path good = dir.resolve("good.json");
    SyntheticCosts.linear(1e-4, 2e-9, 1e-5, 8e-9).write(good);
    Path bad = Files.writeString(dir.resolve("bad.json"), "{\"format\": \"other\"}");
    Path missing = dir.resolve("missing.json");

    assertEquals(good.toString(), PathCosts.resolve(good.toString(), missing).source());
    UncheckedIOException noFile =
        assertThrows(UncheckedIOException.class, () -> PathCosts.resolve(missing.toString(), good));
    assertTrue(noFile.getCause() instanceof NoSuchFileException, noFile.toString());
    assertTrue(noFile.getMessage().contains("heed calibrate"), noFile.getMessage());
    UncheckedIOException badFile =
        assertThrows(UncheckedIOException.class, () -> PathCosts.resolve(bad.toString(), good));
    assertTrue(badFile.getCause() instanceof PathCostsFormatException, badFile.toString());

    assertEquals(good.toString(), PathCosts.resolve(null, good).source());
    assertSame(PathCosts.builtIn(), PathCosts.resolve(null, bad));
    assertSame(PathCosts.builtIn(), PathCosts.resolve("", missing));
  }
}
