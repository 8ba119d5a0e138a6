package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.List;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * What {@code heed classify} writes, through the real jar: the per-label probability columns, JSON
 * Lines against CSV, labels that need CSV quoting, and the HTML report's choice of nodes. (The
 * report's rendering is checked in a browser by {@link ReportBrowserIT}.)
 */
class ClassifyOutputIT {

  private static final long SEED = 20261203L;

  private static final ObjectMapper JSON = new ObjectMapper();

  private static final Pattern CARD =
      Pattern.compile("<section class=\"card\" id=\"card-(\\d+)\" data-id=\"([^\"]*)\"");

  @TempDir Path dir;

  private CliFixtures.ClassifyInputs inputs(Path model) throws Exception {
    CliFixtures.Data data = CliFixtures.randomData(40, 60, 5, SEED);
    return new CliFixtures.ClassifyInputs(
        model,
        data.writeEdges(dir.resolve("g.csv"), ",", true),
        data.writeFeaturesCsv(dir.resolve("x.csv"), null));
  }

  private CliProcess.Result run(CliFixtures.ClassifyInputs inputs, String... more)
      throws Exception {
    CliProcess.Result r = CliProcess.run(dir, inputs.args(more));
    assertEquals(0, r.exitCode(), r.toString());
    return r;
  }

  @Test
  void jsonLinesCarryTheSamePredictionsAsCsvWithEveryLayersExplanation() throws Exception {
    CliFixtures.ClassifyInputs inputs = inputs(CliFixtures.mixedModel(dir));
    List<String[]> csv = CliFixtures.csvRows(run(inputs, "--explain", "2").stdout());
    Path jsonl = dir.resolve("predictions.JSONL");
    CliProcess.Result toFile = run(inputs, "--explain", "2", "--out", jsonl.toString());
    assertEquals("", toFile.stdout(), "with --out, nothing on stdout");
    List<String> lines = Files.readAllLines(jsonl, StandardCharsets.UTF_8);
    assertEquals(40, lines.size());
    assertTrue(Files.readString(jsonl).endsWith("}\n"), "every line ends with a line break");
    List<String> labels = List.of("alpha", "beta", "gamma");
    for (int i = 0; i < 40; i++) {
      String[] row = csv.get(i + 1);
      JsonNode o = JSON.readTree(lines.get(i));
      String where = "seed " + SEED + ", line " + (i + 1) + ": " + lines.get(i);
      assertEquals(row[0], o.get("node").asText(), where);
      assertEquals(row[1], o.get("label").asText(), where);
      assertEquals(Double.parseDouble(row[2]), o.get("probability").asDouble(), 1e-6, where);
      assertEquals(labels, iterable(o.get("probabilities").fieldNames()), where);
      double sum = 0;
      for (int c = 0; c < 3; c++) {
        double p = o.get("probabilities").get(labels.get(c)).asDouble();
        assertEquals(Double.parseDouble(row[3 + c]), p, 1e-6, where);
        sum += p;
      }
      assertEquals(1, sum, 1e-5, where);
      JsonNode layers = o.get("explanation");
      assertEquals(List.of("gat1", "gat2", "full", "masked", "out"), layerNames(layers), where);
      assertEquals(List.of(0, 1, 2, 3, 4), layerIndices(layers), where);
      JsonNode last = layers.get(4).get("neighbours");
      assertEquals(2, last.size(), where);
      for (int k = 0; k < 2; k++) {
        assertEquals(row[6 + 2 * k], last.get(k).get("node").asText(), where);
        assertEquals(
            Double.parseDouble(row[7 + 2 * k]), last.get(k).get("weight").asDouble(), 1e-6, where);
      }
    }

    // --format on stdout; without --explain there is no explanation member.
    List<String> plain = run(inputs, "--format", "jsonl").stdout().lines().toList();
    assertEquals(40, plain.size());
    JsonNode first = JSON.readTree(plain.get(0));
    assertEquals(csv.get(1)[0], first.get("node").asText());
    assertFalse(first.has("explanation"), plain.get(0));
    // An explicit --format wins over the file name.
    Path forced = dir.resolve("forced.jsonl");
    run(inputs, "--format", "csv", "--out", forced.toString());
    assertTrue(Files.readString(forced).startsWith("node,label,probability,p_alpha"));
  }

  @Test
  void labelsWithCommasQuotesAndLineBreaksStayReadable() throws Exception {
    List<String> labels = List.of("with,comma", "say \"hi\"", "two\nlines");
    Path model =
        CliFixtures.demoShapedModel(
            dir.resolve("odd-labels.heed"), CliFixtures.MIXED_FEATURES, labels, SEED);
    CliFixtures.ClassifyInputs inputs = inputs(model);
    List<List<String>> records = CliFixtures.csvRecords(run(inputs, "--explain", "1").stdout());
    assertEquals(
        List.of(
            "node",
            "label",
            "probability",
            "p_with,comma",
            "p_say \"hi\"",
            "p_two\nlines",
            "neighbour_1",
            "weight_1"),
        records.get(0));
    assertEquals(41, records.size());
    for (List<String> record : records.subList(1, 41)) {
      assertEquals(8, record.size(), record.toString());
      assertTrue(labels.contains(record.get(1)), record.toString());
      int c = labels.indexOf(record.get(1));
      assertEquals(record.get(2), record.get(3 + c), "the label's own column: " + record);
    }
    List<String> lines = run(inputs, "--format", "jsonl").stdout().lines().toList();
    assertEquals(40, lines.size(), "line breaks inside labels are escaped in JSON");
    for (String line : lines) {
      JsonNode o = JSON.readTree(line);
      assertEquals(labels, iterable(o.get("probabilities").fieldNames()), line);
      assertTrue(labels.contains(o.get("label").asText()), line);
    }
  }

  /** The report's nodes: by default the 20 with the highest probability of the last label. */
  @Test
  void reportShowsTheNodesScoredHighestForTheChosenClass() throws Exception {
    CliFixtures.ClassifyInputs inputs = inputs(CliFixtures.mixedModel(dir));
    Path report = dir.resolve("report.html");
    Path predictions = dir.resolve("p.csv");
    CliProcess.Result r =
        run(inputs, "--report", report.toString(), "--out", predictions.toString());
    assertTrue(r.stderr().contains("report: 20 explained nodes in " + report), r.toString());
    List<String[]> rows =
        CliFixtures.csvRows(Files.readString(predictions)).subList(1, 41).stream()
            .sorted(Comparator.comparingDouble((String[] row) -> -Double.parseDouble(row[5])))
            .toList();
    List<String> cards = cardIds(report);
    assertEquals(20, cards.size());
    for (int i = 0; i < 20; i++) {
      // Printed with 6 decimals, so compare the probabilities, not the order of near ties.
      String id = cards.get(i);
      String[] row = rows.stream().filter(x -> x[0].equals(id)).findFirst().orElseThrow();
      assertTrue(
          Double.parseDouble(row[5]) >= Double.parseDouble(rows.get(20)[5]) - 1e-6,
          "card " + cards.get(i) + " is among the 20 highest p_gamma");
    }
    assertEquals(rows.get(0)[0], cards.get(0), "the highest p_gamma first");

    run(
        inputs,
        "--report",
        report.toString(),
        "--report-class",
        "alpha",
        "--report-top",
        "3",
        "--report-neighbours",
        "2");
    List<String> byAlpha =
        CliFixtures.csvRows(Files.readString(predictions)).subList(1, 41).stream()
            .sorted(Comparator.comparingDouble((String[] row) -> -Double.parseDouble(row[3])))
            .map(row -> row[0])
            .limit(3)
            .toList();
    assertEquals(byAlpha, cardIds(report));
    String html = Files.readString(report);
    assertTrue(html.contains("P(alpha)"), "the ranked class is named");

    run(inputs, "--report", report.toString(), "--nodes", "acct-009,acct-002,acct-009");
    assertEquals(List.of("acct-009", "acct-002"), cardIds(report), "named nodes, once each");
  }

  private static List<String> cardIds(Path report) throws Exception {
    Matcher m = CARD.matcher(Files.readString(report, StandardCharsets.UTF_8));
    List<String> ids = new ArrayList<>();
    while (m.find()) {
      assertEquals(ids.size() + 1, Integer.parseInt(m.group(1)));
      ids.add(m.group(2));
    }
    return ids;
  }

  private static List<String> iterable(java.util.Iterator<String> names) {
    List<String> list = new ArrayList<>();
    names.forEachRemaining(list::add);
    return list;
  }

  private static List<String> layerNames(JsonNode layers) {
    List<String> names = new ArrayList<>();
    layers.forEach(l -> names.add(l.get("layer").asText()));
    return names;
  }

  private static List<Integer> layerIndices(JsonNode layers) {
    List<Integer> indices = new ArrayList<>();
    layers.forEach(l -> indices.add(l.get("layer_index").asInt()));
    return indices;
  }
}
