package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.demo.PaymentsStream;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.model.PathChoice;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Set;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed replay --demo} with the bundled demo model: by the end of the demo stream every
 * account of the new mule ring is scored mule-ring (the model's own answer, read from its summary),
 * and the scores written last (with {@code --min-change 0}, every change is written, so the last
 * one is the node's final score) equal a from-scratch classification of the final graph, built here
 * from the generator's network and stream without the live graph.
 */
class ReplayDemoTest {

  @TempDir Path dir;

  @Test
  void ringIsFlaggedAndWrittenScoresAreExact() throws Exception {
    Path changes = dir.resolve("changes.jsonl");
    CliProcess.Result r =
        ReplayCommandTest.heed(
            "replay",
            "--demo",
            "--demo-dir",
            dir.resolve("demo").toString(),
            "--window",
            "600",
            "--min-change",
            "0",
            "--path",
            "sparse",
            "--out",
            changes.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("scoring: incremental"), r.stderr());

    PaymentsNetwork network = PaymentsNetworkGenerator.bundledDemo().generate();
    PaymentsStream stream = PaymentsStream.generate(network, PaymentsStream.DEFAULT_SEED);
    List<String> ring = stream.ringAccounts();
    assertTrue(
        r.stdout().contains("All " + ring.size() + " ring accounts are scored mule-ring from"),
        r.stdout());
    for (String account : ring) {
      String row =
          r.stdout().lines().filter(l -> l.strip().startsWith(account)).findFirst().orElseThrow();
      assertTrue(row.contains(" mule-ring "), "scored mule-ring at the end: " + row);
    }

    // The final graph from scratch: the network's transfers, then the stream's events in order.
    int n0 = network.accountCount();
    int f = network.featureNames().size();
    Map<String, Integer> index = new HashMap<>();
    for (int a = 0; a < n0; a++) {
      index.put(network.accountId(a), a);
    }
    Set<List<Integer>> added = new LinkedHashSet<>();
    List<float[]> newFeatures = new ArrayList<>();
    for (PaymentsStream.Event e : stream.events()) {
      switch (e.kind()) {
        case PaymentsStream.ADD_NODE -> {
          index.put(e.source(), n0 + newFeatures.size());
          newFeatures.add(e.features());
        }
        case PaymentsStream.ADD_EDGE ->
            added.add(List.of(index.get(e.source()), index.get(e.target())));
        default -> {
          int a = index.get(e.source());
          int b = index.get(e.target());
          assertTrue(added.remove(List.of(a, b)), "the demo recalls only transfers it made");
        }
      }
    }
    int n = n0 + newFeatures.size();
    int[] sources =
        Arrays.copyOf(network.transferSources(), network.transferCount() + added.size());
    int[] targets = Arrays.copyOf(network.transferTargets(), sources.length);
    int at = network.transferCount();
    for (List<Integer> e : added) {
      sources[at] = e.get(0);
      targets[at++] = e.get(1);
    }
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(sources, targets, n)
            .direction(DemoGraph.DIRECTION)
            .selfLoops(DemoGraph.SELF_LOOPS)
            .duplicates(DemoGraph.DUPLICATES)
            .build();
    float[] x = Arrays.copyOf(network.features(), n * f);
    for (int i = 0; i < newFeatures.size(); i++) {
      System.arraycopy(newFeatures.get(i), 0, x, (n0 + i) * f, f);
    }

    Map<String, JsonNode> last = new HashMap<>();
    ObjectMapper json = new ObjectMapper();
    for (String line : Files.readAllLines(changes, StandardCharsets.UTF_8)) {
      JsonNode change = json.readTree(line);
      last.put(change.get("node").asText(), change);
    }
    assertTrue(last.keySet().containsAll(ring), "every ring account is written");
    List<String> reported = new ArrayList<>(last.keySet());
    int[] nodes = reported.stream().mapToInt(index::get).toArray();
    Classification scratch =
        NodeClassifier.of(
                DemoRun.bundledModelForTests(),
                ClassifyOptions.defaults().withPath(PathChoice.SPARSE))
            .classify(graph, NodeFeatures.ofRowMajor(x, n, f), nodes);
    List<String> labels = PaymentsNetwork.ROLES;
    for (int k = 0; k < nodes.length; k++) {
      NodePrediction want = scratch.predictions().get(k);
      JsonNode got = last.get(reported.get(k)).get("probabilities");
      for (int c = 0; c < labels.size(); c++) {
        double w = want.probabilities()[c];
        assertEquals(
            w,
            got.get(labels.get(c)).asDouble(),
            1e-5 * Math.max(Math.abs(w), 1e-3),
            reported.get(k) + " " + labels.get(c));
      }
    }
  }
}
