package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.model.AttentionModel;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/**
 * {@code POST /transfers}: an update is applied whole, and afterwards every account's answer equals
 * a from-scratch classification of the updated graph (within 1e-5 relative) and names the new
 * version; a bad body gets a 400 with a clear message and changes nothing.
 */
class ScoringServiceUpdatesTest {

  private static final long SEED = 20261205L;
  private static final Duration TIMEOUT = Duration.ofSeconds(30);
  private static final ObjectMapper JSON = new ObjectMapper();

  private static PaymentsNetwork network;
  private static AttentionModel model;
  private static ScoringService service;
  private static HttpClient client;

  @BeforeAll
  static void startService() throws Exception {
    network = PaymentsNetworkGenerator.of(1000, 6000, SEED).generate();
    model = TestModel.build(SEED);
    service =
        ScoringService.start(
            model, PaymentsGraphs.toIndexedGraph(network), PaymentsGraphs.features(network), 0, 2);
    client = HttpClient.newBuilder().version(HttpClient.Version.HTTP_1_1).build();
  }

  @AfterAll
  static void stopService() {
    service.close();
  }

  private static HttpResponse<String> post(String body) throws Exception {
    return client.send(
        HttpRequest.newBuilder(service.uri("/transfers"))
            .timeout(TIMEOUT)
            .POST(HttpRequest.BodyPublishers.ofString(body))
            .build(),
        HttpResponse.BodyHandlers.ofString());
  }

  private static JsonNode get(String pathAndQuery) throws Exception {
    HttpResponse<String> r =
        client.send(
            HttpRequest.newBuilder(service.uri(pathAndQuery)).timeout(TIMEOUT).GET().build(),
            HttpResponse.BodyHandlers.ofString());
    assertEquals(200, r.statusCode(), r.body());
    return JSON.readTree(r.body());
  }

  /**
   * One update (a new account paid by three accounts, a transfer between existing accounts, a
   * recalled transfer), then every account whose from-scratch score changed, and a sample of the
   * rest, queried: answers equal classify on the updated graph.
   */
  @Test
  void postThenQueryGivesExactScoresOfTheNewVersion() throws Exception {
    long before = service.version();
    int n = network.accountCount();
    int[] sources = network.transferSources();
    int[] targets = network.transferTargets();
    // A tie made by exactly one transfer, so recalling it removes the tie.
    int recalled = -1;
    for (int e = 0; e < sources.length && recalled < 0; e++) {
      int count = 0;
      for (int k = 0; k < sources.length; k++) {
        boolean same =
            (sources[k] == sources[e] && targets[k] == targets[e])
                || (sources[k] == targets[e] && targets[k] == sources[e]);
        count += same ? 1 : 0;
      }
      recalled = count == 1 && sources[e] != targets[e] ? e : -1;
    }
    SplittableRandom random = new SplittableRandom(SEED);
    float[] x = new float[6];
    for (int k = 0; k < x.length; k++) {
      x[k] = (float) random.nextGaussian();
    }
    String body =
        "{\"accounts\": [{\"id\": \"acct-new\", \"features\": "
            + Arrays.toString(x)
            + "}], \"transfers\": ["
            + "{\"source\": \"acct-000011\", \"target\": \"acct-new\"},"
            + "{\"source\": \"acct-000022\", \"target\": \"acct-new\"},"
            + "{\"source\": \"acct-new\", \"target\": \"acct-000033\"},"
            + "{\"source\": \"acct-000044\", \"target\": \"acct-000055\"}],"
            + " \"recalled\": [{\"source\": \""
            + network.accountId(sources[recalled])
            + "\", \"target\": \""
            + network.accountId(targets[recalled])
            + "\"}]}";
    HttpResponse<String> response = post(body);
    assertEquals(200, response.statusCode(), response.body());
    JsonNode answer = JSON.readTree(response.body());
    assertEquals(before + 1, answer.get("version").asLong());
    assertEquals(n + 1, answer.get("nodes").asInt());
    assertTrue(answer.get("rescored").asInt() >= answer.get("changed_nodes").asInt(), body);

    // From scratch: the network's transfers minus the recalled one, plus the new ones.
    int[] s = new int[sources.length - 1 + 4];
    int[] t = new int[s.length];
    int w = 0;
    for (int e = 0; e < sources.length; e++) {
      if (e != recalled) {
        s[w] = sources[e];
        t[w++] = targets[e];
      }
    }
    int[][] added = {{11, n}, {22, n}, {n, 33}, {44, 55}};
    for (int[] e : added) {
      s[w] = e[0];
      t[w++] = e[1];
    }
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(s, t, n + 1)
            .direction(PaymentsGraphs.DIRECTION)
            .selfLoops(PaymentsGraphs.SELF_LOOPS)
            .duplicates(PaymentsGraphs.DUPLICATES)
            .build();
    float[] features = Arrays.copyOf(network.features(), (n + 1) * 6);
    System.arraycopy(x, 0, features, n * 6, 6);
    Classification expected =
        NodeClassifier.of(model, ClassifyOptions.defaults())
            .classify(graph, NodeFeatures.ofRowMajor(features, n + 1, 6));
    // Query every account whose score the update changed, and a sample of the others.
    Classification previous =
        NodeClassifier.of(model, ClassifyOptions.defaults())
            .classify(
                PaymentsGraphs.toIndexedGraph(network).graph(), PaymentsGraphs.features(network));
    List<Integer> queried = new ArrayList<>();
    int changed = 0;
    for (int node = 0; node <= n; node++) {
      boolean moved =
          node == n
              || !Arrays.equals(
                  previous.forNode(node).probabilities(), expected.forNode(node).probabilities());
      changed += moved ? 1 : 0;
      if (moved || random.nextInt(20) == 0) {
        queried.add(node);
      }
    }
    assertTrue(changed > 5 && changed < n / 2, "the update changed some scores: " + changed);
    for (int node : queried) {
      String id = node == n ? "acct-new" : network.accountId(node);
      JsonNode score = get("/score?node=" + id);
      assertEquals(before + 1, score.get("version").asLong(), id);
      float[] want = expected.forNode(node).probabilities();
      for (int c = 0; c < want.length; c++) {
        double got = score.get("probabilities").get(TestModel.LABELS[c]).asDouble();
        assertEquals(want[c], got, 1e-5 * Math.max(Math.abs(want[c]), 1e-3), id + " class " + c);
      }
    }
    JsonNode fresh = get("/score?node=acct-new&fresh=true");
    assertEquals("on-request", fresh.get("computed").asText());
    assertEquals(before + 1, fresh.get("version").asLong());
    assertEquals(0, answer.get("pending").asInt(), "an unlimited refresh leaves nothing pending");
    JsonNode table = get("/score?node=acct-new");
    assertEquals("fresh", table.get("state").asText());
    assertEquals("from-table", table.get("computed").asText());
    // A refreshed score carries no attention weights: its explanation is computed on request.
    JsonNode explained = get("/score?node=acct-new&explain=2");
    assertEquals("on-request", explained.get("computed").asText());
    assertEquals(before + 1, explained.get("version").asLong());
    assertTrue(explained.get("explanation").size() > 0, explained.toString());
  }

  @ParameterizedTest
  @CsvSource(
      delimiter = '|',
      value = {
        "{ | not valid JSON",
        "[] | must be a JSON object",
        "{} | the update is empty",
        "{\"payments\": []} | unknown key 'payments'",
        "{\"transfers\": {}} | 'transfers' must be a JSON array",
        "{\"transfers\": [{\"source\": \"acct-000001\"}]} | needs 'target'",
        "{\"transfers\": [{\"source\": \"acct-000001\", \"target\": 7}]} | needs 'target'",
        "{\"transfers\": [{\"source\": \"acct-000001\", \"target\": \"nobody\"}]} | unknown target"
            + " id 'nobody'",
        "{\"transfers\": [{\"source\": \"acct-000001\", \"target\": \"acct-000002\"}], \"recalled\":"
            + " [{\"source\": \"acct-000003\", \"target\": \"nobody\"}]} | unknown target id"
            + " 'nobody'",
        "{\"accounts\": [{\"id\": \"acct-x\", \"features\": [1, 2]}]} | must have 6 values",
        "{\"accounts\": [{\"id\": \"acct-x\", \"features\": [1, 2, 3, 4, 5, \"6\"]}]} | feature 5"
            + " of account 'acct-x' is not a number",
        "{\"accounts\": [{\"id\": \"acct-000001\", \"features\": [1, 2, 3, 4, 5, 6]}]} | already",
        "{\"accounts\": [{\"id\": \"acct-x\"}]} | each of 'accounts' is",
      })
  void badBodiesAreRefusedAndChangeNothing(String body, String message) throws Exception {
    long version = service.version();
    JsonNode scoreBefore = get("/score?node=acct-000002");
    HttpResponse<String> response = post(body);
    assertEquals(400, response.statusCode(), response.body());
    JsonNode error = JSON.readTree(response.body());
    assertTrue(error.get("error").asText().contains(message), response.body());
    assertFalse(response.body().contains("Exception") || response.body().contains(".java"));
    assertEquals(version, service.version(), "nothing applied");
    assertEquals(version, get("/health").get("version").asLong());
    assertEquals(scoreBefore, get("/score?node=acct-000002"), "scores unchanged");
  }

  /** A removal of a tie that is not there refuses the whole update, transfers before it too. */
  @Test
  void nothingIsHalfApplied() throws Exception {
    long version = service.version();
    int nodes = get("/health").get("nodes").asInt();
    HttpResponse<String> response =
        post(
            "{\"accounts\": [{\"id\": \"acct-half\", \"features\": [1, 2, 3, 4, 5, 6]}],"
                + " \"transfers\": [{\"source\": \"acct-000001\", \"target\": \"acct-half\"}],"
                + " \"recalled\": [{\"source\": \"acct-half\", \"target\": \"acct-000009\"}]}");
    assertEquals(400, response.statusCode(), response.body());
    assertTrue(response.body().contains("nothing applied"), response.body());
    assertEquals(version, service.version());
    assertEquals(nodes, get("/health").get("nodes").asInt());
    HttpResponse<String> unknown =
        client.send(
            HttpRequest.newBuilder(service.uri("/score?node=acct-half")).GET().build(),
            HttpResponse.BodyHandlers.ofString());
    assertEquals(404, unknown.statusCode(), "the account was not added: " + unknown.body());
  }

  @Test
  void largeBodiesAndOtherMethodsAreRefused() throws Exception {
    HttpResponse<String> large =
        post("{\"transfers\": [" + " ".repeat(ScoringService.MAX_BODY_BYTES) + "]}");
    assertEquals(413, large.statusCode(), large.body());
    HttpResponse<String> getTransfers =
        client.send(
            HttpRequest.newBuilder(service.uri("/transfers")).GET().build(),
            HttpResponse.BodyHandlers.ofString());
    assertEquals(405, getTransfers.statusCode());
    assertEquals("POST", getTransfers.headers().firstValue("Allow").orElse(""));
  }
}
