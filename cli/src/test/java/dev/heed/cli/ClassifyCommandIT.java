package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.PathCosts;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed classify} driven through the real jar: output columns and values (checked against the
 * library's NodeClassifier run in this JVM on the same files), both feature formats, the graph
 * policy options, chosen nodes, explanations, and every error path.
 */
class ClassifyCommandIT {

  private static final long SEED = 20261202L;

  @TempDir Path dir;

  private CliFixtures.Data data() {
    return CliFixtures.randomData(40, 60, 5, SEED);
  }

  @Test
  void classifiesEveryNodeAsTheLibraryDoes() throws Exception {
    CliFixtures.Data data = data();
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), CliFixtures.MIXED_FEATURES);
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            graph.toString(),
            "--features",
            features.toString(),
            "--path",
            "sparse",
            "--threads",
            "2");
    assertEquals(0, r.exitCode(), r.toString());
    List<String[]> rows = CliFixtures.csvRows(r.stdout());
    assertEquals(
        "node,label,probability,p_alpha,p_beta,p_gamma",
        String.join(",", rows.get(0)),
        r.toString());
    assertEquals(41, rows.size(), r.toString());

    // The same files through the library, in this JVM (seed in the messages).
    EdgeListResult<String> read =
        EdgeListFileBuilder.stringIds(graph)
            .header(true)
            .direction(DirectionPolicy.SYMMETRISE) // the CLI's documented defaults
            .selfLoops(SelfLoopPolicy.ADD)
            .duplicates(DuplicatePolicy.MERGE)
            .build();
    assertEquals(40, read.graph().nodeCount());
    AttentionModel m = ModelFile.read(model);
    Path npy = data.writeFeaturesNpy(dir.resolve("x.npy"));
    Classification expected =
        NodeClassifier.of(m, ClassifyOptions.defaults().withPath(PathChoice.SPARSE))
            .classify(read.graph(), NodeFeatures.readNpy(npy));
    for (int i = 0; i < 40; i++) {
      String[] row = rows.get(i + 1);
      NodePrediction p = expected.predictions().get(i);
      assertEquals(read.nodes().idOf(i), row[0], "row order = node order, seed " + SEED);
      assertEquals(p.label(), row[1], "seed " + SEED + ", node " + row[0]);
      assertEquals(p.probability(), Float.parseFloat(row[2]), 1e-6, "seed " + SEED);
      float[] every = p.probabilities();
      for (int c = 0; c < every.length; c++) {
        assertEquals(every[c], Float.parseFloat(row[3 + c]), 1e-6, "seed " + SEED + ", p_" + c);
      }
    }

    String err = r.stderr();
    assertTrue(err.contains("40 nodes"), err);
    assertTrue(err.contains("symmetrised, self-loops added, duplicates merged"), err);
    for (String layer : List.of("gat1", "gat2", "full", "masked", "out", "probabilities")) {
      assertTrue(err.lines().anyMatch(l -> l.contains(" " + layer + " ")), layer + ":\n" + err);
    }
    assertTrue(err.lines().anyMatch(l -> l.contains(" gat1 ") && l.contains("sparse")), err);
    assertTrue(err.lines().anyMatch(l -> l.contains(" probabilities ") && l.contains(" - ")), err);
    assertTrue(err.contains("total"), err);
    assertFalse(err.contains("Exception"), err);
  }

  @Test
  void npyFeaturesTsvGraphChosenNodesExplanationsAndOutFile() throws Exception {
    CliFixtures.Data data = data();
    Path model = CliFixtures.mixedModel(dir);
    Path csvGraph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path tsvGraph = data.writeEdges(dir.resolve("g.tsv"), "\t", false);
    Path csvFeatures = data.writeFeaturesCsv(dir.resolve("x.csv"), null);
    Path npyFeatures = data.writeFeaturesNpy(dir.resolve("x.npy"));
    CliProcess.Result fromCsv =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            csvGraph.toString(),
            "--features",
            csvFeatures.toString());
    assertEquals(0, fromCsv.exitCode(), fromCsv.toString());
    Path out = dir.resolve("out.csv");
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            tsvGraph.toString(),
            "--features",
            npyFeatures.toString(),
            "--nodes",
            "acct-007,acct-003",
            "--nodes",
            "acct-007",
            "--explain",
            "3",
            "--out",
            out.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertEquals("", r.stdout(), "with --out, nothing on stdout");
    List<String[]> rows = CliFixtures.csvRows(Files.readString(out, StandardCharsets.UTF_8));
    assertEquals(
        "node,label,probability,p_alpha,p_beta,p_gamma,"
            + "neighbour_1,weight_1,neighbour_2,weight_2,neighbour_3,weight_3",
        String.join(",", rows.get(0)));
    assertEquals(4, rows.size());
    assertEquals(
        List.of("acct-007", "acct-003", "acct-007"),
        rows.subList(1, 4).stream().map(x -> x[0]).toList());
    // Same predictions as from CSV features over the CSV graph (header detected, no header given).
    for (String[] row : rows.subList(1, 4)) {
      String[] same =
          CliFixtures.csvRows(fromCsv.stdout()).stream()
              .filter(x -> x[0].equals(row[0]))
              .findFirst()
              .orElseThrow();
      assertEquals(List.of(same).subList(0, 6), List.of(row).subList(0, 6), "seed " + SEED);
      // Explanations: neighbours in the (symmetrised, self-looped) neighbourhood, weights
      // descending.
      Set<String> neighbourhood = neighbourhood(data, row[0]);
      float previous = Float.POSITIVE_INFINITY;
      for (int k = 0; k < 3; k++) {
        String neighbour = row[6 + 2 * k];
        if (neighbour.isEmpty()) {
          continue;
        }
        assertTrue(neighbourhood.contains(neighbour), neighbour + " not a neighbour of " + row[0]);
        float w = Float.parseFloat(row[7 + 2 * k]);
        assertTrue(
            w >= 0 && w <= 1 && w <= previous,
            "weights in [0,1], descending: " + String.join(",", row));
        previous = w;
      }
    }
  }

  private static Set<String> neighbourhood(CliFixtures.Data data, String id) {
    Set<String> s = new HashSet<>();
    s.add(id);
    for (String[] e : data.edges()) {
      if (e[0].equals(id)) {
        s.add(e[1]);
      }
      if (e[1].equals(id)) {
        s.add(e[0]);
      }
    }
    return s;
  }

  @Test
  void graphPolicyOptionsChangeTheGraph() throws Exception {
    CliFixtures.Data data = data();
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), CliFixtures.MIXED_FEATURES);
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            graph.toString(),
            "--features",
            features.toString(),
            "--direction",
            "keep",
            "--self-loops",
            "as-given");
    assertEquals(0, r.exitCode(), r.toString());
    Set<String> directed = new HashSet<>();
    for (String[] e : data.edges()) {
      directed.add(e[0] + ">" + e[1]);
    }
    assertTrue(
        r.stderr().contains(directed.size() + " edges"),
        "expected " + directed.size() + " distinct directed edges:\n" + r);
    assertTrue(
        r.stderr().contains("directed, self-loops as given, duplicates merged"), r.toString());
  }

  @Test
  void nodesOnlyInTheFeaturesFileAreClassifiedFromTheirOwnFeatures() throws Exception {
    CliFixtures.Data data = data();
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), CliFixtures.MIXED_FEATURES);
    Files.writeString(
        features, "loner,0.5,-0.25,0.125,1,-1\n", java.nio.file.StandardOpenOption.APPEND);
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "classify",
            "--model",
            model.toString(),
            "--graph",
            graph.toString(),
            "--features",
            features.toString(),
            "--explain",
            "2");
    assertEquals(0, r.exitCode(), r.toString());
    List<String[]> rows = CliFixtures.csvRows(r.stdout());
    assertEquals(42, rows.size(), r.toString());
    String[] loner = rows.get(41);
    // With self-loops added, a node without edges attends to itself alone, with weight 1.
    assertEquals(List.of("loner", "1.000000", "", ""), List.of(loner).subList(6, 10), r.toString());
    assertTrue(r.stderr().contains("41 nodes"), r.toString());
    assertTrue(r.stderr().contains("1 of the nodes appear only in x.csv"), r.toString());
  }

  @Test
  void errorsAreOneLineWithTheRightExitCode() throws Exception {
    CliFixtures.Data data = data();
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), CliFixtures.MIXED_FEATURES);
    String m = model.toString();
    String g = graph.toString();
    String x = features.toString();

    expectError(
        1,
        "file not found: " + dir.resolve("missing.csv"),
        "classify",
        "--model",
        m,
        "--graph",
        dir.resolve("missing.csv").toString(),
        "--features",
        x);
    expectError(
        1,
        "--model: file not found",
        "classify",
        "--model",
        dir.resolve("no.heed").toString(),
        "--graph",
        g,
        "--features",
        x);

    Path bad =
        Files.writeString(
            dir.resolve("bad.csv"), "source,target\nacct-001,acct-002\nacct-002,acct-003,9\n");
    expectError(
        1,
        "bad.csv, line 3:",
        "classify",
        "--model",
        m,
        "--graph",
        bad.toString(),
        "--features",
        x);

    expectError(
        1,
        "--nodes: 2 ids are not in the graph",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        x,
        "--nodes",
        "acct-001,nobody,acct-999");

    Path fourColumns = dir.resolve("x4.csv");
    Files.write(
        fourColumns,
        Files.readAllLines(features).stream()
            .skip(1)
            .map(l -> l.substring(0, l.lastIndexOf(',')))
            .toList());
    expectError(
        1,
        "x4.csv, line 1: 4 feature values, but the model reads 5 features",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        fourColumns.toString());

    Path renamed =
        Files.writeString(
            dir.resolve("xr.csv"), Files.readString(features).replaceFirst("f4", "income"));
    expectError(
        1,
        "do not match the model's [f0, f1, f2, f3, f4]",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        renamed.toString());

    Path npy =
        CliFixtures.randomData(41, 60, 5, SEED).writeFeaturesNpyWithoutIds(dir.resolve("x41.npy"));
    expectError(
        1,
        "x41.npy: 41 rows without node ids, so row i can only be the node with id i",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        npy.toString());
    Path npy6 = CliFixtures.randomData(40, 60, 6, SEED).writeFeaturesNpy(dir.resolve("x6.npy"));
    expectError(
        1,
        "6 feature columns, but the model reads 5",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        npy6.toString());

    Path missingRow = dir.resolve("xm.csv");
    Files.write(
        missingRow,
        Files.readAllLines(features).stream().filter(l -> !l.startsWith("acct-017,")).toList());
    expectError(
        1,
        "1 of the 40 nodes have no row ('acct-017')",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        missingRow.toString());

    expectError(
        2,
        "--path must be auto, dense or sparse",
        "classify",
        "--model",
        m,
        "--graph",
        g,
        "--features",
        x,
        "--path",
        "fastest");
    expectError(2, "classify needs --model, --graph and --features", "classify", "--graph", g);
  }

  @Test
  void outputOptionErrorsAreOneLineWithTheRightExitCode() throws Exception {
    CliFixtures.Data data = data();
    CliFixtures.ClassifyInputs in =
        new CliFixtures.ClassifyInputs(
            CliFixtures.mixedModel(dir),
            data.writeEdges(dir.resolve("g.csv"), ",", true),
            data.writeFeaturesCsv(dir.resolve("x.csv"), null));
    String report = dir.resolve("r.html").toString();

    expectError(2, "--format must be auto, csv or jsonl, got 'xml'", in.args("--format", "xml"));
    expectError(2, "--report-top needs --report FILE", in.args("--report-top", "5"));
    expectError(2, "--report-class needs --report FILE", in.args("--report-class", "beta"));
    expectError(
        2,
        "--report-top chooses the report's nodes by score; with --nodes",
        in.args("--report", report, "--nodes", "acct-001", "--report-top", "3"));
    expectError(
        2,
        "--report-neighbours must be between 1 and 40, got 0",
        in.args("--report", report, "--report-neighbours", "0"));
    expectError(
        2,
        "--report-top must be between 1 and 500, got 501",
        in.args("--report", report, "--report-top", "501"));
    expectError(
        1,
        "--report-class: 'delta' is not one of the model's class labels [alpha, beta, gamma]",
        in.args("--report", report, "--report-class", "delta"));
    expectError(
        1,
        "--report: the directory " + dir.resolve("nowhere") + " does not exist",
        in.args("--report", dir.resolve("nowhere").resolve("r.html").toString()));
    expectError(
        1,
        "--out: the directory " + dir.resolve("nowhere") + " does not exist",
        in.args("--out", dir.resolve("nowhere").resolve("p.jsonl").toString()));
  }

  @Test
  void autoReportsItsProfileAndPredictionsAndRefusesABadProfile() throws Exception {
    CliFixtures.Data data = data();
    CliFixtures.ClassifyInputs in =
        new CliFixtures.ClassifyInputs(
            CliFixtures.mixedModel(dir),
            data.writeEdges(dir.resolve("g.csv"), ",", true),
            data.writeFeaturesCsv(dir.resolve("x.csv"), null));
    Path good = dir.resolve("costs.json");
    PathCosts.builtIn().write(good);
    CliProcess.Result r =
        CliProcess.run(dir, in.args("--path", "auto", "--path-costs", good.toString()));
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("--path auto: path costs from " + good), r.toString());
    assertTrue(r.stderr().contains("dense (pred.)"), r.toString());
    assertTrue(
        r.stderr().lines().anyMatch(l -> l.contains(" gat1 ") && l.matches(".*\\d\\.\\d{4}.*")),
        "gat1's line has its predicted seconds:\n" + r);

    Path foreign = Files.writeString(dir.resolve("other.json"), "{\"format\": \"something-else\"}");
    expectError(
        1,
        foreign + ": not a Heed path-cost profile",
        in.args("--path", "auto", "--path-costs", foreign.toString()));
    expectError(1, "--path-costs", in.args("--path-costs", dir.resolve("missing.json").toString()));
  }

  private void expectError(int exit, String message, String... args) throws Exception {
    CliProcess.Result r = CliProcess.run(dir, args);
    assertEquals(exit, r.exitCode(), r.toString());
    List<String> lines = r.stderr().lines().filter(l -> !l.startsWith("WARNING")).toList();
    assertTrue(
        lines.get(0).startsWith("heed: error: ") && lines.get(0).contains(message),
        "expected '" + message + "':\n" + r);
    assertFalse(
        r.stderr().contains("Exception") || r.stderr().contains("\tat "),
        "no stack trace without --debug:\n" + r);
    assertEquals("", r.stdout(), r.toString());
  }
}
