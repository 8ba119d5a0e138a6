package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.attention.PathCosts;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.DemoFiles;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.HeldOutScore;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import java.util.zip.ZipFile;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed classify --demo} through the real jar. The demo files are generated once for the
 * class. The plumbing (file generation, the classify path, accuracy and recall arithmetic, the
 * explained predictions, the caution) is checked with a demo-shaped model of random weights; the
 * bundled model's figures are checked against the library's.
 */
class DemoCommandIT {

  private static final Pattern ACCURACY = Pattern.compile("accuracy +([0-9.]+)");

  @TempDir static Path shared;

  @Test
  void demoReportsHeldOutAccuracyRecallAndExplainedPredictions() throws Exception {
    Path model =
        CliFixtures.demoShapedModel(
            shared.resolve("random-demo-shaped.heed"),
            PaymentsNetworkGenerator.FEATURE_NAMES,
            PaymentsNetwork.ROLES,
            7L);
    Path predictions = shared.resolve("predictions.csv");
    Path report = shared.resolve("demo-report.html");
    CliProcess.Result r =
        CliProcess.run(
            shared,
            "classify",
            "--demo",
            "--demo-dir",
            shared.resolve("demo").toString(),
            "--model",
            model.toString(),
            "--threads",
            "2",
            "--out",
            predictions.toString(),
            "--report",
            report.toString());
    assertEquals(0, r.exitCode(), r.toString());
    String out = r.stdout();
    assertTrue(
        Files.isRegularFile(shared.resolve("demo").resolve(DemoFiles.MANIFEST)), r.toString());
    assertTrue(out.contains("synthetic data"), out);
    assertTrue(out.contains("500,000 transfers"), out);
    assertTrue(out.contains("Caution: these are model scores"), out);
    for (String role : PaymentsNetwork.ROLES) {
      assertTrue(out.contains("recall") && out.contains(role + " "), role + ":\n" + out);
    }
    assertEquals(
        3,
        out.lines().filter(l -> l.matches("  acct-[0-9]{6} +mule-ring [0-9.]+ .*")).count(),
        out);
    assertTrue(out.lines().anyMatch(l -> l.matches(" {6}acct-[0-9]{6} +weight [0-9.]+ .*")), out);
    assertTrue(r.stderr().contains("transfers.csv"), r.toString());
    // The report: by default the 20 accounts scored highest as the last role, mule-ring.
    assertTrue(r.stderr().contains("report: 20 explained nodes in " + report), r.toString());
    String html = Files.readString(report, StandardCharsets.UTF_8);
    assertEquals(20, html.split("<section class=\"card\"", -1).length - 1, "one card per account");
    assertTrue(html.contains("with the highest probability of mule-ring"), "ranked by mule-ring");

    // The printed accuracy, recomputed from the written predictions and roles.csv.
    Map<String, String[]> roles = new HashMap<>();
    for (String line :
        Files.readAllLines(shared.resolve("demo").resolve(DemoFiles.ROLES), StandardCharsets.UTF_8)
            .subList(1, 50_001)) {
      String[] f = line.split(",");
      roles.put(f[0], f);
    }
    List<String[]> rows =
        CliFixtures.csvRows(Files.readString(predictions, StandardCharsets.UTF_8));
    int test = 0;
    int right = 0;
    for (String[] row : rows.subList(1, rows.size())) {
      String[] truth = roles.get(row[0]);
      if (truth[2].equals("test")) {
        test++;
        right += truth[1].equals(row[1]) ? 1 : 0;
      }
    }
    Matcher m = ACCURACY.matcher(out);
    assertTrue(m.find(), out);
    assertEquals(String.format(Locale.ROOT, "%.3f", (double) right / test), m.group(1), out);
    assertTrue(out.contains(String.format(Locale.ROOT, "%,d", test)), out);
  }

  /**
   * A profile calibrated on a machine can price a warm dense call of a few dozen nodes at
   * microseconds (5 µs for n = 32 on the reference machine), below the sparse path's; AUTO must
   * still not start ND4J (about 1.5 s once) for calls that save less than that. Here every dense
   * coefficient is 0, so the cost model alone would send every attention call to the dense path.
   */
  @Test
  void aProfileWithFreeDenseCallsDoesNotStartNd4jForTheDemo() throws Exception {
    ObjectMapper json = new ObjectMapper();
    ObjectNode profile;
    try (InputStream in = PathCosts.class.getResourceAsStream("builtin-path-costs.json")) {
      profile = (ObjectNode) json.readTree(in);
    }
    ObjectNode dense = (ObjectNode) profile.get("regimes").get("dense");
    for (String term : names(dense.fieldNames())) {
      dense.put(term, 0.0);
    }
    Path costs = shared.resolve("free-dense-path-costs.json");
    json.writeValue(costs.toFile(), profile);
    Path classLog = shared.resolve("free-dense-classes.log");
    CliProcess.Result r =
        CliProcess.runWithJvmOptions(
            shared,
            List.of(
                "-Xlog:class+load=info:file=" + classLog,
                "-D" + PathCosts.LOCATION_PROPERTY + "=" + costs),
            "classify",
            "--demo",
            "--demo-dir",
            shared.resolve("demo-free-dense").toString());
    assertEquals(0, r.exitCode(), r.toString());
    String classes = Files.readString(classLog, StandardCharsets.UTF_8);
    assertTrue(classes.contains("dev.heed.cli.DemoRun"), "class log not written: " + classLog);
    assertFalse(classes.contains("org.nd4j."), "AUTO started ND4J for the demo's small calls");
    assertTrue(r.stderr().contains("AUTO charges the dense path"), r.toString());
  }

  private static List<String> names(java.util.Iterator<String> names) {
    List<String> all = new java.util.ArrayList<>();
    names.forEachRemaining(all::add);
    return all;
  }

  /**
   * The bundled model through the CLI (files written, read back as edge list and CSV) scores the
   * held-out accounts exactly as the library does on the generator's arrays with {@link DemoGraph}
   * and {@link HeldOutScore} (the figures recorded in demo/README.md).
   */
  @Test
  void bundledDemoModelMatchesTheLibrarysHeldOutScore() throws Exception {
    try (ZipFile jar = new ZipFile(System.getProperty("heed.cli.jar"))) {
      assumeTrue(
          jar.getEntry(DemoRun.MODEL_RESOURCE.substring(1)) != null,
          "awaits the bundled demo model " + DemoRun.MODEL_RESOURCE);
    }
    Path classLog = shared.resolve("demo-classes.log");
    CliProcess.Result r =
        CliProcess.runWithJvmOptions(
            shared,
            List.of("-Xlog:class+load=info:file=" + classLog),
            "classify",
            "--demo",
            "--demo-dir",
            shared.resolve("demo").toString());
    assertEquals(0, r.exitCode(), r.toString());
    String out = r.stdout();
    assertTrue(out.contains("Caution"), r.toString());
    // the demo runs on the sparse path with a 6-feature first layer: nothing in it needs BLAS, so
    // ND4J (native libraries, over 800 classes) must not even be loaded
    String classes = Files.readString(classLog, StandardCharsets.UTF_8);
    assertTrue(classes.contains("dev.heed.cli.DemoRun"), "class log not written: " + classLog);
    assertFalse(classes.contains("org.nd4j."), "the sparse demo loaded ND4J classes");
    assertFalse(classes.contains("org.bytedeco."), "the sparse demo loaded JavaCPP classes");
    // heed classify's plain start: the demo's sparse calls run the plain loops, which a JVM that
    // reads the Vector API (as this one does) loads for nothing else
    assertTrue(
        classes.contains("dev.heed.sparse.internal.ScalarPerHeadMath"),
        "the demo did not run its first calls on the plain loops");

    PaymentsNetwork network = PaymentsNetworkGenerator.bundledDemo().generate();
    AttentionModel model;
    try (InputStream in = DemoRun.class.getResourceAsStream(DemoRun.MODEL_RESOURCE)) {
      model = ModelFile.read(in, DemoRun.MODEL_RESOURCE, NpyLimits.defaults());
    }
    assertEquals(PaymentsNetwork.ROLES, model.classLabels());
    int n = network.accountCount();
    Classification c =
        NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE))
            .classify(
                DemoGraph.build(network),
                NodeFeatures.ofRowMajor(network.features(), n, network.featureNames().size()));
    int[] predicted = c.predictions().stream().mapToInt(NodePrediction::labelIndex).toArray();
    HeldOutScore score = HeldOutScore.of(predicted, network, PaymentsNetwork.Split.TEST);
    assertTrue(
        out.contains(String.format(Locale.ROOT, "accuracy  %.3f", score.accuracy())),
        score + "\n" + r);
    for (int role = 0; role < PaymentsNetwork.ROLES.size(); role++) {
      String expected =
          String.format(
              Locale.ROOT,
              "%s %.3f (of %,d)",
              PaymentsNetwork.ROLES.get(role),
              score.recall()[role],
              score.roleCounts()[role]);
      assertTrue(out.contains(expected), expected + "\n" + r);
    }
  }
}
