package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import java.io.IOException;
import java.io.PrintWriter;
import java.io.StringWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collection;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed replay} in-process on a small directed graph and a seeded random stream: the scores
 * it writes last for each node equal what {@code heed classify} computes from scratch on the final
 * graph (within 1e-5 relative), and errors name the stream's file and line.
 */
class ReplayCommandTest {

  private static final List<String> FEATURES = List.of("f0", "f1", "f2");
  private static final List<String> LABELS = List.of("low", "mid", "high");
  private static final GraphPolicies POLICIES =
      new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.ADD, DuplicatePolicy.MERGE);
  private static final ObjectMapper JSON = new ObjectMapper();

  @TempDir static Path dir;

  private static Path model;
  private static Path graph;
  private static Path features;
  private static Path stream;

  /** The final graph, as the stream leaves it: directed edges present, features per id. */
  private static final Set<List<String>> finalEdges = new LinkedHashSet<>();

  private static final Map<String, float[]> finalFeatures = new LinkedHashMap<>();

  private static final Set<List<String>> startEdges = new LinkedHashSet<>();

  @BeforeAll
  static void writeInputs() throws IOException {
    AttentionModel m =
        LiveFixtures.threeLayerModel(FEATURES, LABELS, 91).withGraphPolicies(POLICIES);
    model = dir.resolve("model.heed");
    ModelFile.write(m, model);
    CliFixtures.Data data = CliFixtures.randomData(80, 60, FEATURES.size(), 92);
    graph = data.writeEdges(dir.resolve("edges.csv"), ",", true);
    features = data.writeFeaturesCsv(dir.resolve("features.csv"), FEATURES);
    for (String[] e : data.edges()) {
      startEdges.add(List.of(e[0], e[1]));
      if (!e[0].equals(e[1])) {
        finalEdges.add(List.of(e[0], e[1]));
      }
    }
    for (String id : data.ids()) {
      finalFeatures.put(id, data.featuresOf(id));
    }
    stream = writeStream(dir.resolve("stream.csv"), new SplittableRandom(93));
  }

  /** Random adds, removals of present edges, new nodes and new features, in time order. */
  private static Path writeStream(Path file, SplittableRandom random) throws IOException {
    StringBuilder s = new StringBuilder("time,kind,source,target," + String.join(",", FEATURES));
    s.append('\n');
    List<String> ids = new ArrayList<>(finalFeatures.keySet());
    double time = 100;
    for (int e = 0; e < 120; e++) {
      time += random.nextInt(4) == 0 ? 0 : random.nextDouble() * 20;
      String t = StreamFile.decimal(time);
      int kind = random.nextInt(10);
      if (kind < 5) {
        String a = ids.get(random.nextInt(ids.size()));
        String b = ids.get(random.nextInt(ids.size()));
        s.append(t).append(",add-edge,").append(a).append(',').append(b).append(",,,\n");
        if (!a.equals(b)) {
          finalEdges.add(List.of(a, b));
        }
      } else if (kind < 7 && !finalEdges.isEmpty()) {
        List<List<String>> present = new ArrayList<>(finalEdges);
        List<String> edge = present.get(random.nextInt(present.size()));
        s.append(t).append(",remove-edge,").append(edge.get(0)).append(',');
        s.append(edge.get(1)).append(",,,\n");
        finalEdges.remove(edge);
      } else {
        boolean added = kind < 9;
        String id = added ? "new-" + e : ids.get(random.nextInt(ids.size()));
        float[] x = new float[FEATURES.size()];
        for (int c = 0; c < x.length; c++) {
          x[c] = (float) (2 * random.nextDouble() - 1);
        }
        s.append(t).append(added ? ",add-node," : ",set-features,").append(id).append(',');
        for (float v : x) {
          s.append(',').append(Float.toString(v));
        }
        s.append('\n');
        finalFeatures.put(id, x);
        if (added) {
          ids.add(id);
        }
      }
    }
    return Files.writeString(file, s, StandardCharsets.UTF_8);
  }

  /** Runs the tool in this JVM: exit code, stdout, stderr. */
  static CliProcess.Result heed(String... args) {
    StringWriter out = new StringWriter();
    StringWriter err = new StringWriter();
    int code = HeedCli.run(new PrintWriter(out, true), new PrintWriter(err, true), args);
    return new CliProcess.Result(code, out.toString(), err.toString());
  }

  /**
   * Classifies a graph from scratch through {@code heed classify} (sparse path): its edge list and
   * features are written to {@code dir}; returns each node's JSON line by node id.
   */
  static Map<String, JsonNode> classifyFromScratch(
      Path dir,
      Path model,
      Collection<List<String>> finalEdges,
      Map<String, float[]> finalFeatures,
      List<String> featureNames)
      throws IOException {
    StringBuilder edges = new StringBuilder("source,target\n");
    for (List<String> e : finalEdges) {
      edges.append(e.get(0)).append(',').append(e.get(1)).append('\n');
    }
    StringBuilder x = new StringBuilder("id," + String.join(",", featureNames) + "\n");
    for (Map.Entry<String, float[]> f : finalFeatures.entrySet()) {
      x.append(f.getKey());
      for (float v : f.getValue()) {
        x.append(',').append(Float.toString(v));
      }
      x.append('\n');
    }
    Path finalGraph = Files.writeString(dir.resolve("final-edges.csv"), edges);
    Path finalX = Files.writeString(dir.resolve("final-features.csv"), x);
    Path scratch = dir.resolve("scratch.jsonl");
    CliProcess.Result c =
        heed(
            "classify",
            "--model",
            model.toString(),
            "--graph",
            finalGraph.toString(),
            "--features",
            finalX.toString(),
            "--path",
            "sparse",
            "--out",
            scratch.toString());
    assertEquals(0, c.exitCode(), c.toString());
    Map<String, JsonNode> expected = new HashMap<>();
    for (String line : Files.readAllLines(scratch, StandardCharsets.UTF_8)) {
      JsonNode p = JSON.readTree(line);
      expected.put(p.get("node").asText(), p);
    }
    return expected;
  }

  private static String[] replayArgs(Path streamFile, String... more) {
    List<String> args =
        new ArrayList<>(
            List.of(
                "replay",
                "--model",
                model.toString(),
                "--graph",
                graph.toString(),
                "--features",
                features.toString(),
                "--stream",
                streamFile.toString()));
    args.addAll(List.of(more));
    return args.toArray(String[]::new);
  }

  @Test
  void lastWrittenScoresEqualClassifyOnTheFinalGraph() throws IOException {
    Path changes = dir.resolve("changes.jsonl");
    CliProcess.Result r =
        heed(
            replayArgs(
                stream, "--batch-events", "7", "--min-change", "0", "--out", changes.toString()));
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("120 events of stream.csv in 18 batches"), r.stderr());
    assertTrue(r.stderr().contains("median") && r.stderr().contains("p99"), r.stderr());

    Map<String, JsonNode> last = new HashMap<>();
    long previousBatch = 0;
    for (String line : Files.readAllLines(changes, StandardCharsets.UTF_8)) {
      JsonNode change = JSON.readTree(line);
      assertTrue(change.get("batch").asLong() >= previousBatch, line);
      previousBatch = change.get("batch").asLong();
      assertEquals(previousBatch + 1, change.get("version").asLong(), "version after the load");
      last.put(change.get("node").asText(), change);
    }
    int added = 0;
    for (String id : finalFeatures.keySet()) {
      if (id.startsWith("new-")) {
        added++;
        assertTrue(last.containsKey(id), "every added node is written: " + id);
      }
    }
    assertTrue(added > 3, "the stream adds nodes: " + added);

    // From scratch: the final graph's edge list and features through heed classify.
    Map<String, JsonNode> expected =
        classifyFromScratch(dir, model, finalEdges, finalFeatures, FEATURES);
    assertFalse(last.isEmpty());
    for (Map.Entry<String, JsonNode> e : last.entrySet()) {
      JsonNode want = expected.get(e.getKey());
      assertEquals(want.get("label").asText(), e.getValue().get("label").asText(), e.getKey());
      for (String label : LABELS) {
        double w = want.get("probabilities").get(label).asDouble();
        double got = e.getValue().get("probabilities").get(label).asDouble();
        assertEquals(w, got, 1e-5 * Math.max(Math.abs(w), 1e-3), e.getKey() + " " + label);
      }
    }
  }

  @Test
  void csvOutputHasClassifysConventions() throws IOException {
    CliProcess.Result r = heed(replayArgs(stream, "--window", "60"));
    assertEquals(0, r.exitCode(), r.toString());
    List<List<String>> rows = CliFixtures.csvRecords(r.stdout());
    assertEquals(
        List.of(
            "batch",
            "version",
            "time",
            "node",
            "old_label",
            "label",
            "probability",
            "p_low",
            "p_mid",
            "p_high"),
        rows.get(0));
    assertTrue(rows.size() > 1, r.stdout());
    for (List<String> row : rows.subList(1, rows.size())) {
      assertEquals(10, row.size(), row.toString());
      assertTrue(row.get(6).matches("[01]\\.[0-9]{6}"), row.toString());
    }
  }

  @Test
  void unknownIdsNameTheLine() throws IOException {
    Path bad =
        Files.writeString(
            dir.resolve("unknown.csv"),
            "time,kind,source,target\n1,add-edge,acct-001,acct-002\n2,add-edge,acct-001,nobody\n");
    CliProcess.Result r = heed(replayArgs(bad));
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(
        r.stderr()
            .contains("unknown.csv, line 3: add-edge acct-001 -> nobody: unknown node 'nobody'"),
        r.stderr());
    assertEquals("", r.stdout(), "nothing written before the stream was checked");
  }

  @Test
  void removingAMissingEdgeNamesTheLine() throws IOException {
    Path bad =
        Files.writeString(
            dir.resolve("missing.csv"),
            "time,kind,source,target\n1,add-edge,acct-001,acct-002\n"
                + "70,remove-edge,acct-003,acct-007\n");
    assertFalse(startEdges.contains(List.of("acct-003", "acct-007")), "not an edge at the start");
    CliProcess.Result r = heed(replayArgs(bad));
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(
        r.stderr().contains("missing.csv, line 3: remove-edge acct-003 -> acct-007"), r.stderr());
    assertTrue(r.stderr().contains("batch 2 refused"), r.stderr());
  }

  @Test
  void usageErrors() {
    CliProcess.Result r = heed(replayArgs(stream, "--window", "5", "--batch-events", "3"));
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("--window or --batch-events, not both"), r.stderr());
    r = heed(replayArgs(stream, "--min-change", "2"));
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
    r = heed("replay", "--model", model.toString());
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("replay needs --model, --graph, --features and --stream"));
  }
}
