package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.DeserializationFeature;
import com.fasterxml.jackson.databind.JsonNode;
import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.LayerExplanation;
import dev.heed.classify.NeighbourWeight;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.IndexedGraph;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.io.OutputStream;
import java.net.InetAddress;
import java.net.Socket;
import java.net.URI;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.Iterator;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import java.util.concurrent.Callable;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;

/**
 * The scoring service over real HTTP on 127.0.0.1: answers under concurrent load must be identical
 * (bit for bit) to a single-threaded classification of the same graph, on both the precomputed and
 * the on-request path; user errors must give 4xx JSON errors, never a 500 or a stack trace.
 */
class ScoringServiceTest {

  private static final long SEED = 20261203L;
  private static final int CLIENTS = 8;
  private static final int REQUESTS_PER_CLIENT = 130; // 1,040 in all
  private static final Duration REQUEST_TIMEOUT = Duration.ofSeconds(30);
  private static final long LOAD_TIMEOUT_SECONDS = 240;

  private static final ObjectMapper JSON =
      new ObjectMapper().enable(DeserializationFeature.USE_BIG_DECIMAL_FOR_FLOATS);

  private static AttentionModel model;
  private static IndexedGraph<String> graph;
  private static NodeFeatures features;
  private static ScoringService service;
  private static HttpClient client;

  @BeforeAll
  static void startService() throws IOException {
    PaymentsNetwork network = PaymentsNetworkGenerator.of(1000, 8000, SEED).generate();
    model = TestModel.build(SEED);
    graph = PaymentsGraphs.toIndexedGraph(network);
    features = PaymentsGraphs.features(network);
    service = ScoringService.start(model, graph, features, 0, 4);
    client =
        HttpClient.newBuilder()
            .version(HttpClient.Version.HTTP_1_1)
            .connectTimeout(REQUEST_TIMEOUT)
            .build();
  }

  @AfterAll
  static void stopService() {
    service.close();
  }

  private static HttpResponse<String> get(String pathAndQuery) throws Exception {
    return send(HttpRequest.newBuilder(service.uri(pathAndQuery)).GET());
  }

  private static HttpResponse<String> send(HttpRequest.Builder request) throws Exception {
    return client.send(
        request.timeout(REQUEST_TIMEOUT).build(), HttpResponse.BodyHandlers.ofString());
  }

  @Test
  void concurrentAnswersAreIdenticalToSingleThreadedClassification() throws Exception {
    // The reference: one single-threaded classification per explanation size.
    Classification[] expected = new Classification[ScoringService.MAX_EXPLAIN + 1];
    for (int k = 0; k <= ScoringService.MAX_EXPLAIN; k++) {
      ClassifyOptions options =
          k == 0 ? ClassifyOptions.defaults() : ClassifyOptions.defaults().withExplanations(k);
      expected[k] = NodeClassifier.of(model, options).classify(graph.graph(), features);
    }

    // On request the service classifies the one node over its receptive field, which equals the
    // whole-graph pass to float rounding, not bit for bit; its single-threaded reference is the
    // same call, made here for every on-request draw the clients below will make.
    Map<Long, NodePrediction> onRequestExpected = new HashMap<>();
    for (int c = 0; c < CLIENTS; c++) {
      SplittableRandom random = new SplittableRandom(SEED + 100 + c);
      for (int r = 0; r < REQUESTS_PER_CLIENT; r++) {
        int node = random.nextInt(graph.graph().nodeCount());
        int k = random.nextInt(ScoringService.MAX_EXPLAIN + 1);
        if (random.nextInt(8) == 0) {
          ClassifyOptions options =
              k == 0 ? ClassifyOptions.defaults() : ClassifyOptions.defaults().withExplanations(k);
          NodePrediction field =
              onRequestExpected.computeIfAbsent(
                  onRequestKey(node, k),
                  key ->
                      NodeClassifier.of(model, options)
                          .classify(graph.graph(), features, node)
                          .forNode(node));
          float[] whole = expected[k].forNode(node).probabilities();
          float[] near = field.probabilities();
          for (int cls = 0; cls < whole.length; cls++) {
            assertEquals(whole[cls], near[cls], 1e-5 * Math.max(Math.abs(whole[cls]), 1e-3));
          }
        }
      }
    }

    List<Callable<Integer>> clients = new ArrayList<>();
    for (int c = 0; c < CLIENTS; c++) {
      long clientSeed = SEED + 100 + c;
      clients.add(
          () -> {
            SplittableRandom random = new SplittableRandom(clientSeed);
            int fresh = 0;
            for (int r = 0; r < REQUESTS_PER_CLIENT; r++) {
              int node = random.nextInt(graph.graph().nodeCount());
              int k = random.nextInt(ScoringService.MAX_EXPLAIN + 1);
              boolean onRequest = random.nextInt(8) == 0;
              fresh += onRequest ? 1 : 0;
              String id = graph.nodes().idOf(node);
              HttpResponse<String> response =
                  get("/score?node=" + id + "&explain=" + k + (onRequest ? "&fresh=true" : ""));
              String where = "client seed " + clientSeed + ", request " + r + ", node " + id;
              assertEquals(200, response.statusCode(), where + ": " + response.body());
              NodePrediction want =
                  onRequest
                      ? onRequestExpected.get(onRequestKey(node, k))
                      : expected[k].forNode(node);
              assertAnswer(want, k, onRequest, response.body(), where);
            }
            return fresh;
          });
    }
    ExecutorService pool = Executors.newFixedThreadPool(CLIENTS);
    try {
      List<Future<Integer>> results =
          pool.invokeAll(clients, LOAD_TIMEOUT_SECONDS, TimeUnit.SECONDS);
      int fresh = 0;
      for (Future<Integer> f : results) {
        assertFalse(
            f.isCancelled(), "a client did not finish within " + LOAD_TIMEOUT_SECONDS + " s");
        fresh += f.get(); // rethrows a client's assertion failure
      }
      assertTrue(fresh > 50, "the on-request path was exercised: " + fresh + " requests");
    } finally {
      pool.shutdownNow();
    }
  }

  private static long onRequestKey(int node, int explain) {
    return (long) node * (ScoringService.MAX_EXPLAIN + 1) + explain;
  }

  /** Checks one JSON answer against the reference prediction: same floats, same ids, same order. */
  private static void assertAnswer(
      NodePrediction expected, int explain, boolean onRequest, String body, String where)
      throws IOException {
    JsonNode answer = JSON.readTree(body);
    assertEquals(graph.nodes().idOf(expected.node()), answer.get("node").asText(), where);
    assertEquals(expected.label(), answer.get("label").asText(), where);
    assertEquals(expected.probability(), floatOf(answer.get("probability")), 0f, where);
    float[] p = expected.probabilities();
    Iterator<String> labels = answer.get("probabilities").fieldNames();
    for (int c = 0; c < p.length; c++) {
      String label = labels.next();
      assertEquals(model.classLabels().get(c), label, where);
      assertEquals(p[c], floatOf(answer.get("probabilities").get(label)), 0f, where);
    }
    assertFalse(labels.hasNext(), where);
    assertEquals(onRequest ? "on-request" : "from-table", answer.get("computed").asText(), where);
    if (explain == 0) {
      assertFalse(answer.has("explanation"), where);
      return;
    }
    List<LayerExplanation> layers = expected.explanation().orElseThrow();
    JsonNode explanation = answer.get("explanation");
    assertEquals(layers.size(), explanation.size(), where);
    for (int l = 0; l < layers.size(); l++) {
      assertEquals(layers.get(l).layerName(), explanation.get(l).get("layer").asText(), where);
      List<NeighbourWeight> top = layers.get(l).topNeighbours();
      JsonNode neighbours = explanation.get(l).get("neighbours");
      assertEquals(top.size(), neighbours.size(), where);
      for (int t = 0; t < top.size(); t++) {
        String at = where + ", layer " + l + ", rank " + t;
        assertEquals(
            graph.nodes().idOf(top.get(t).node()), neighbours.get(t).get("node").asText(), at);
        assertEquals(top.get(t).weight(), floatOf(neighbours.get(t).get("weight")), 0f, at);
      }
    }
  }

  /** The float a JSON number spells (parsed from its exact decimal text, not via double). */
  private static float floatOf(JsonNode number) {
    assertTrue(number.isNumber(), number + " is a number");
    return Float.parseFloat(number.decimalValue().toString());
  }

  @ParameterizedTest
  @CsvSource(
      delimiter = '|',
      value = {
        "/score | 400 | missing parameter 'node'",
        "/score?node= | 400 | missing parameter 'node'",
        "/score?node=acct-999999 | 404 | unknown node 'acct-999999'",
        "/score?node=%3Cscript%3E | 404 | unknown node '<script>'",
        "/score?node=acct-000001&explain=abc | 400 | 'explain' must be a whole number",
        "/score?node=acct-000001&explain=-1 | 400 | 'explain' must be a whole number",
        "/score?node=acct-000001&explain=6 | 400 | from 0 to 5",
        "/score?node=acct-000001&explain=99999999999999 | 400 | 'explain' must be",
        "/score?node=acct-000001&fresh=yes | 400 | 'fresh' must be true or false",
        "/score?node=acct-000001&node=acct-000002 | 400 | given more than once",
        "/score?nod=acct-000001 | 400 | unknown parameter 'nod'",
        "/nowhere | 404 | no such path '/nowhere'",
        "/scoreboard?node=acct-000001 | 404 | no such path '/scoreboard'",
        "/ | 404 | no such path '/'",
      })
  void userErrorsGiveJsonErrorsWithoutStackTraces(String pathAndQuery, int status, String message)
      throws Exception {
    HttpResponse<String> response = get(pathAndQuery);
    assertError(response, status, message);
  }

  @Test
  void aMalformedEscapeIsABadRequest() throws Exception {
    // java.net.URI refuses to build this address, so send the request line by hand. The JDK's
    // server rejects it before any handler runs, with its own short HTML 400 (not JSON).
    try (Socket socket = new Socket(InetAddress.getLoopbackAddress(), service.port())) {
      socket.setSoTimeout((int) REQUEST_TIMEOUT.toMillis());
      OutputStream out = socket.getOutputStream();
      out.write(
          "GET /score?node=%zz HTTP/1.1\r\nHost: 127.0.0.1\r\nConnection: close\r\n\r\n"
              .getBytes(StandardCharsets.US_ASCII));
      out.flush();
      String reply = new String(socket.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
      assertTrue(reply.startsWith("HTTP/1.1 400 "), reply);
      assertFalse(reply.contains("\tat ") || reply.contains(".java:"), "no stack trace: " + reply);
    }
  }

  @Test
  void otherMethodsAreRefused() throws Exception {
    HttpResponse<String> response =
        send(
            HttpRequest.newBuilder(service.uri("/score?node=acct-000001"))
                .POST(HttpRequest.BodyPublishers.ofString("{}")));
    assertError(response, 405, "method POST is not allowed");
    assertEquals("GET", response.headers().firstValue("Allow").orElse(""));
  }

  private static void assertError(HttpResponse<String> response, int status, String message)
      throws IOException {
    String body = response.body();
    assertEquals(status, response.statusCode(), body);
    assertTrue(
        response.headers().firstValue("Content-Type").orElse("").startsWith("application/json"),
        "content type");
    JsonNode error = JSON.readTree(body);
    assertEquals(1, error.size(), body);
    assertTrue(error.get("error").asText().contains(message), body);
    assertFalse(
        body.contains("Exception") || body.contains("\tat ") || body.contains(".java"), body);
  }

  @Test
  void healthSaysHowManyNodes() throws Exception {
    HttpResponse<String> response = get("/health");
    assertEquals(200, response.statusCode());
    JsonNode health = JSON.readTree(response.body());
    assertEquals("ok", health.get("status").asText());
    assertEquals(1000, health.get("nodes").asInt());
  }

  @Test
  void listensOnLoopbackOnlyAndStopsCleanly() throws Exception {
    ScoringService other = ScoringService.start(model, graph, features, 0, 1);
    URI health = other.uri("/health");
    assertEquals("127.0.0.1", health.getHost());
    assertEquals(200, send(HttpRequest.newBuilder(health).GET()).statusCode());
    other.close();
    other.close(); // a second close does nothing
    assertThrows(IOException.class, () -> send(HttpRequest.newBuilder(health).GET()));
  }

  @Test
  void startRejectsBadArguments() {
    assertThrows(
        IllegalArgumentException.class, () -> ScoringService.start(model, graph, features, 0, 0));
    AttentionModel sevenFeatures = TestModel.build(SEED, 7);
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> ScoringService.start(sevenFeatures, graph, features, 0, 1));
    assertTrue(e.getMessage().contains("reads 7"), e.getMessage());
  }
}
