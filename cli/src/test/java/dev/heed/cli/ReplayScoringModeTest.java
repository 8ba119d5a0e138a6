package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed replay} scores the demo model with the incremental scorer and falls back to scoring
 * every node by receptive field for a model with full self-attention (which the incremental scorer
 * refuses), says which in its summary, and in both cases the scores it writes last equal {@code
 * heed classify} on the final graph (within 1e-5 relative).
 */
class ReplayScoringModeTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  @TempDir Path dir;

  @Test
  void demoModelIsScoredIncrementally() throws IOException {
    AttentionModel demo = DemoRun.bundledModelForTests();
    Path model = dir.resolve("demo.heed");
    ModelFile.write(demo, model);
    CliProcess.Result r = replayAndCheck(model, demo, 101);
    assertTrue(r.stderr().contains("scoring: incremental"), r.stderr());
  }

  @Test
  void fullSelfAttentionFallsBackToEveryNode() throws IOException {
    Path model = CliFixtures.mixedModel(dir);
    AttentionModel mixed = ModelFile.read(model);
    assertTrue(mixed.needsEveryNode(), "the fixture attends over every node");
    CliProcess.Result r = replayAndCheck(model, mixed, 102);
    assertTrue(r.stderr().contains("scoring: every node on every snapshot"), r.stderr());
    assertTrue(r.stderr().contains("full self-attention"), r.stderr());
    assertTrue(
        r.stderr().contains("affected nodes per batch: median 50, max 50; refreshed: median 50"),
        r.stderr());
  }

  /**
   * Replays random new edges and new features over a random 50-node graph, then checks the last
   * written score of every node against {@code heed classify} on the final graph.
   */
  private CliProcess.Result replayAndCheck(Path model, AttentionModel m, long seed)
      throws IOException {
    List<String> names = m.featureNames();
    CliFixtures.Data data = CliFixtures.randomData(50, 40, names.size(), seed);
    Path graph = data.writeEdges(dir.resolve("edges.csv"), ",", true);
    List<String> ids = data.nodeOrder();
    Set<List<String>> edges = new LinkedHashSet<>();
    for (String[] e : data.edges()) {
      edges.add(List.of(e[0], e[1]));
    }
    Map<String, float[]> x = new HashMap<>();
    for (String id : ids) {
      x.put(id, data.featuresOf(id));
    }
    SplittableRandom random = new SplittableRandom(seed + 1);
    StringBuilder s = new StringBuilder("time,kind,source,target," + String.join(",", names));
    s.append('\n');
    String blanks = ",".repeat(names.size());
    for (int e = 0; e < 30; e++) {
      String t = Integer.toString(10 * e);
      if (e % 5 == 4) {
        String id = ids.get(random.nextInt(ids.size()));
        float[] v = new float[names.size()];
        s.append(t).append(",set-features,").append(id).append(',');
        for (int c = 0; c < v.length; c++) {
          v[c] = (float) (2 * random.nextDouble() - 1);
          s.append(',').append(Float.toString(v[c]));
        }
        s.append('\n');
        x.put(id, v);
        continue;
      }
      String a = ids.get(random.nextInt(ids.size()));
      String b = ids.get(random.nextInt(ids.size()));
      if (a.equals(b) || edges.contains(List.of(a, b)) || edges.contains(List.of(b, a))) {
        continue;
      }
      edges.add(List.of(a, b));
      s.append(t).append(",add-edge,").append(a).append(',').append(b).append(blanks).append('\n');
    }
    Path stream = Files.writeString(dir.resolve("stream.csv"), s, StandardCharsets.UTF_8);
    Path features = data.writeFeaturesCsv(dir.resolve("features.csv"), names);
    Path changes = dir.resolve("changes.jsonl");
    CliProcess.Result r =
        ReplayCommandTest.heed(
            "replay",
            "--model",
            model.toString(),
            "--graph",
            graph.toString(),
            "--features",
            features.toString(),
            "--stream",
            stream.toString(),
            "--batch-events",
            "4",
            "--min-change",
            "0",
            "--path",
            "sparse",
            "--out",
            changes.toString());
    assertEquals(0, r.exitCode(), r.toString());
    Map<String, JsonNode> last = new HashMap<>();
    for (String line : Files.readAllLines(changes, StandardCharsets.UTF_8)) {
      JsonNode change = JSON.readTree(line);
      last.put(change.get("node").asText(), change);
    }
    assertFalse(last.isEmpty(), "the stream changes some scores");

    Map<String, float[]> finalX = new LinkedHashMap<>();
    for (String id : ids) {
      finalX.put(id, x.get(id));
    }
    Map<String, JsonNode> expected =
        ReplayCommandTest.classifyFromScratch(dir, model, edges, finalX, names);
    List<String> checked = new ArrayList<>();
    for (JsonNode want : expected.values()) {
      JsonNode got = last.get(want.get("node").asText());
      if (got == null) {
        continue;
      }
      for (String label : m.classLabels()) {
        double w = want.get("probabilities").get(label).asDouble();
        double g = got.get("probabilities").get(label).asDouble();
        assertEquals(w, g, 1e-5 * Math.max(Math.abs(w), 1e-3), want.get("node") + " " + label);
      }
      checked.add(want.get("node").asText());
    }
    assertEquals(last.keySet(), Set.copyOf(checked), "every written node is checked");
    return r;
  }
}
