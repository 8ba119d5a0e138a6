package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertThrows;
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
import dev.heed.graph.GraphPolicies;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.net.InetAddress;
import java.net.Socket;
import java.net.SocketTimeoutException;
import java.net.http.HttpClient;
import java.net.http.HttpRequest;
import java.net.http.HttpResponse;
import java.nio.charset.StandardCharsets;
import java.time.Duration;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Queue;
import java.util.SplittableRandom;
import java.util.TreeMap;
import java.util.concurrent.Callable;
import java.util.concurrent.CompletableFuture;
import java.util.concurrent.ConcurrentHashMap;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import org.junit.jupiter.api.AfterAll;
import org.junit.jupiter.api.BeforeAll;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.ValueSource;

/**
 * The scoring service under load and faults, over real HTTP on 127.0.0.1: 8, 32 and 64 clients
 * mixing score queries, updates, malformed and oversized requests, while slow clients trickle
 * requests byte by byte and the model is reloaded twice. The service must stay up, give every bad
 * request its status (400, 404, 405, 408, 413; 503 when full, in its own test), and every good
 * answer must equal a single-threaded classification of the model and graph version the answer
 * names (within 1e-5 relative: table scores come from the incremental scorer, on-request ones from
 * a receptive field, both equal to a whole-graph pass to float rounding).
 */
class ScoringServiceLoadTest {

  private static final long SEED = 20261204L;
  private static final int ACCOUNTS = 1000;
  private static final int REQUESTS_PER_LEVEL = 640;
  private static final int SLOW_CLIENTS = 4;
  private static final long READ_TIMEOUT_MILLIS = 1500;
  private static final Duration REQUEST_TIMEOUT = Duration.ofSeconds(30);
  private static final long LEVEL_TIMEOUT_SECONDS = 60;
  private static final GraphPolicies POLICIES =
      new GraphPolicies(
          PaymentsGraphs.DIRECTION, PaymentsGraphs.SELF_LOOPS, PaymentsGraphs.DUPLICATES);
  private static final ObjectMapper JSON = new ObjectMapper();

  private static PaymentsNetwork network;
  private static AttentionModel first;
  private static AttentionModel second;
  private static HttpClient client;

  @BeforeAll
  static void setUp() {
    network = PaymentsNetworkGenerator.of(ACCOUNTS, 6000, SEED).generate();
    first = TestModel.build(SEED);
    second = TestModel.build(SEED + 1);
    client =
        HttpClient.newBuilder()
            .version(HttpClient.Version.HTTP_1_1)
            .connectTimeout(REQUEST_TIMEOUT)
            .build();
  }

  @AfterAll
  static void tearDown() {
    client = null;
  }

  /** One applied update, as the client sent it. */
  private record Update(List<String> accounts, List<float[]> features, List<String[]> transfers) {}

  /** One good score answer, as the service gave it. */
  private record Answer(
      String node, long modelVersion, long graphVersion, float[] probabilities, long atNanos) {}

  /** A request that must be refused: how to send it, and what must come back. */
  private record Bad(String method, String path, String body, int status, String message) {}

  private static final List<Bad> BAD =
      List.of(
          new Bad("POST", "/transfers", "{", 400, "not valid JSON"),
          new Bad(
              "POST",
              "/transfers",
              "{\"transfers\": [{\"source\": 5, \"target\": \"acct-000001\"}]}",
              400,
              "needs 'source'"),
          new Bad(
              "POST",
              "/transfers",
              "{\"transfers\": [{\"source\": \"acct-000001\", \"target\": \"nobody\"}]}",
              400,
              "unknown target id 'nobody'"),
          new Bad(
              "POST",
              "/transfers",
              "{\"accounts\": [{\"id\": \"bad-x\", \"features\": [1, 2, \"3\", 4, 5, 6]}]}",
              400,
              "is not a number"),
          new Bad("GET", "/score?node=nobody", null, 404, "unknown node 'nobody'"),
          new Bad("GET", "/score?node=acct-000001&explain=abc", null, 400, "'explain' must be"),
          new Bad("GET", "/nowhere", null, 404, "no such path"),
          new Bad("DELETE", "/score?node=acct-000001", null, 405, "is not allowed"));

  @ParameterizedTest(name = "{0} clients")
  @ValueSource(ints = {8, 32, 64})
  void manyClientsWithUpdatesFaultsAndReloadsGetExactAnswers(int clients) throws Exception {
    ScoringService.Limits limits =
        new ScoringService.Limits(4, clients, 4 + clients + SLOW_CLIENTS + 8, READ_TIMEOUT_MILLIS);
    Map<Long, AttentionModel> models = new ConcurrentHashMap<>();
    models.put(1L, first);
    Map<Long, Update> updates = new ConcurrentHashMap<>();
    Queue<Answer> answers = new ConcurrentLinkedQueue<>();
    AtomicInteger done = new AtomicInteger();
    int perClient = REQUESTS_PER_LEVEL / clients;
    int total = perClient * clients;
    long startVersion;
    try (ScoringService service = start(limits)) {
      startVersion = service.version();
      ExecutorService pool = Executors.newFixedThreadPool(clients + SLOW_CLIENTS + 1);
      try {
        // Slow clients first, so that they hold connection threads while the others run; their
        // deadlines start after this instant.
        long slowStarted = System.nanoTime();
        List<Future<Long>> slow = new ArrayList<>();
        for (int s = 0; s < SLOW_CLIENTS; s++) {
          boolean body = s % 2 == 1;
          slow.add(pool.submit(() -> trickle(service, body)));
        }
        CountDownLatch reloaded = new CountDownLatch(1);
        List<Callable<Void>> tasks = new ArrayList<>();
        for (int c = 0; c < clients; c++) {
          int id = c;
          tasks.add(
              () -> {
                runClient(service, clients, id, perClient, updates, answers, done, reloaded);
                return null;
              });
        }
        // Two reloads while requests are in flight: the second model at a third of the requests,
        // the first again at two thirds.
        Future<?> reloads =
            pool.submit(
                () -> {
                  reloadWhen(service, done, total / 3, second, models);
                  reloadWhen(service, done, 2 * total / 3, first, models);
                  reloaded.countDown();
                  return null;
                });
        List<Future<Void>> results = new ArrayList<>();
        for (Callable<Void> task : tasks) {
          results.add(pool.submit(task));
        }
        for (Future<Void> f : results) {
          f.get(LEVEL_TIMEOUT_SECONDS, TimeUnit.SECONDS); // rethrows a client's failure
        }
        reloads.get(LEVEL_TIMEOUT_SECONDS, TimeUnit.SECONDS);
        long firstSlowClosed = Long.MAX_VALUE;
        for (Future<Long> f : slow) {
          firstSlowClosed =
              Math.min(firstSlowClosed, f.get(LEVEL_TIMEOUT_SECONDS, TimeUnit.SECONDS));
        }
        assertTrue(
            firstSlowClosed - slowStarted >= TimeUnit.MILLISECONDS.toNanos(READ_TIMEOUT_MILLIS),
            "a slow client was cut off before its deadline");
        long whileSlow = firstSlowClosed;
        assertTrue(
            answers.stream().anyMatch(a -> a.atNanos() < whileSlow),
            "other clients were answered while the slow ones held their connections");
        assertEquals(3L, service.modelVersion(), "both reloads happened");
        // Still up, and every update is in.
        JsonNode health = JSON.readTree(get(service, "/health").body());
        assertEquals("ok", health.get("status").asText());
        assertEquals(startVersion + updates.size(), health.get("version").asLong());
      } finally {
        pool.shutdownNow();
      }
    }
    checkAgainstReference(startVersion, models, updates, answers);
    long modelVersions = answers.stream().mapToLong(Answer::modelVersion).distinct().count();
    long graphVersions = answers.stream().mapToLong(Answer::graphVersion).distinct().count();
    assertTrue(modelVersions >= 2, "answers from more than one model: " + modelVersions);
    assertTrue(graphVersions > 3, "answers from several graph versions: " + graphVersions);
  }

  /** One client's requests: mostly queries, some updates, some bad and one oversized request. */
  private static void runClient(
      ScoringService service,
      int clients,
      int client,
      int requests,
      Map<Long, Update> updates,
      Queue<Answer> answers,
      AtomicInteger done,
      CountDownLatch reloaded)
      throws Exception {
    SplittableRandom random = new SplittableRandom(SEED * 31 + clients * 1000L + client);
    for (int r = 0; r < requests; r++) {
      String where = clients + " clients, client " + client + ", request " + r;
      if (r == requests - 1) {
        // The last request of each client after both reloads (which wait for two thirds of all
        // requests, fewer than all but the last ones), so that answers come from both models.
        assertTrue(reloaded.await(LEVEL_TIMEOUT_SECONDS, TimeUnit.SECONDS), "the reloads ran");
      }
      double kind = random.nextDouble();
      if (r == 1 && client < 2) {
        HttpResponse<String> large =
            post(service, "{\"transfers\": [" + " ".repeat(ScoringService.MAX_BODY_BYTES) + "]}");
        assertError(large, 413, "over " + ScoringService.MAX_BODY_BYTES + " bytes", where);
      } else if (kind < 0.06) {
        String account = "load-" + clients + "-" + client + "-" + r;
        float[] x = new float[6];
        for (int k = 0; k < x.length; k++) {
          x[k] = (float) random.nextGaussian();
        }
        String payer = network.accountId(random.nextInt(ACCOUNTS));
        String payee = network.accountId(random.nextInt(ACCOUNTS));
        String other = network.accountId(random.nextInt(ACCOUNTS));
        List<String[]> transfers =
            List.of(
                new String[] {payer, account},
                new String[] {account, payee},
                new String[] {other, payer});
        StringBuilder body =
            new StringBuilder("{\"accounts\": [{\"id\": \"" + account + "\", \"features\": ")
                .append(Arrays.toString(x))
                .append("}], \"transfers\": [");
        for (int t = 0; t < transfers.size(); t++) {
          body.append(t > 0 ? ", " : "")
              .append("{\"source\": \"")
              .append(transfers.get(t)[0])
              .append("\", \"target\": \"")
              .append(transfers.get(t)[1])
              .append("\"}");
        }
        HttpResponse<String> response = post(service, body.append("]}").toString());
        assertEquals(200, response.statusCode(), where + ": " + response.body());
        long version = JSON.readTree(response.body()).get("version").asLong();
        Update previous = updates.put(version, new Update(List.of(account), List.of(x), transfers));
        assertNull(previous, where + ": two updates answered version " + version);
      } else if (kind < 0.16) {
        Bad bad = BAD.get(random.nextInt(BAD.size()));
        HttpRequest.BodyPublisher body =
            bad.body() == null
                ? HttpRequest.BodyPublishers.noBody()
                : HttpRequest.BodyPublishers.ofString(bad.body());
        HttpResponse<String> response =
            send(HttpRequest.newBuilder(service.uri(bad.path())).method(bad.method(), body));
        assertError(response, bad.status(), bad.message(), where + " (" + bad + ")");
      } else {
        String node = network.accountId(random.nextInt(ACCOUNTS));
        int explain = random.nextInt(3);
        boolean fresh = random.nextInt(8) == 0;
        HttpResponse<String> response =
            get(
                service,
                "/score?node=" + node + "&explain=" + explain + (fresh ? "&fresh=true" : ""));
        assertEquals(200, response.statusCode(), where + ": " + response.body());
        JsonNode answer = JSON.readTree(response.body());
        assertEquals(node, answer.get("node").asText(), where);
        assertEquals("fresh", answer.get("state").asText(), where);
        float[] p = new float[TestModel.LABELS.length];
        for (int c = 0; c < p.length; c++) {
          p[c] = answer.get("probabilities").get(TestModel.LABELS[c]).floatValue();
        }
        if (explain > 0) {
          assertEquals(2, answer.get("explanation").size(), where + ": one list per layer");
        }
        answers.add(
            new Answer(
                node,
                answer.get("model_version").asLong(),
                answer.get("version").asLong(),
                p,
                System.nanoTime()));
      }
      done.incrementAndGet();
    }
  }

  private static void reloadWhen(
      ScoringService service,
      AtomicInteger done,
      int after,
      AttentionModel model,
      Map<Long, AttentionModel> models)
      throws InterruptedException {
    while (done.get() < after) {
      Thread.sleep(2);
    }
    // Recorded before the swap: answers may name the new version before reload returns.
    long next = service.modelVersion() + 1;
    models.put(next, model);
    assertEquals(next, service.reload(model));
  }

  /**
   * A client that sends a request one byte every 50 ms and never finishes it: the request line and
   * headers, or (with {@code body}) whole headers and then a body. Returns when the service has
   * answered 408 (body) or closed the connection (headers), with the time it did.
   */
  private static Long trickle(ScoringService service, boolean body) throws IOException {
    String request =
        body
            ? "POST /transfers HTTP/1.1\r\nHost: 127.0.0.1\r\nContent-Length: 500\r\n\r\n"
                + "{\"transfers\": [".repeat(40)
            : "GET /score?node=acct-000001 HTTP/1.1\r\nHost: 127.0.0.1\r\nX-Padding: "
                + "x".repeat(400);
    byte[] bytes = request.getBytes(StandardCharsets.US_ASCII);
    int start = body ? request.indexOf("\r\n\r\n") + 4 : 0;
    try (Socket socket = new Socket(InetAddress.getLoopbackAddress(), service.port())) {
      socket.setSoTimeout(50);
      OutputStream out = socket.getOutputStream();
      InputStream in = socket.getInputStream();
      out.write(bytes, 0, start);
      out.flush();
      StringBuilder reply = new StringBuilder();
      long began = System.nanoTime();
      for (int k = start; ; k++) {
        assertTrue(k < bytes.length, "the service waited for the whole slow request");
        out.write(bytes[k]);
        out.flush();
        try {
          int b;
          while ((b = in.read()) >= 0) {
            reply.append((char) b);
          }
          // End of stream: the service closed the connection.
          long closed = System.nanoTime();
          if (body) {
            assertTrue(reply.toString().startsWith("HTTP/1.1 408 "), "slow body: " + reply);
            assertTrue(reply.toString().contains("not received in time"), reply.toString());
          } else {
            assertEquals("", reply.toString(), "slow headers: closed without an answer");
          }
          assertTrue(closed - began < TimeUnit.SECONDS.toNanos(10), "cut off in time");
          return closed;
        } catch (SocketTimeoutException stillOpen) {
          // Nothing yet (or the answer so far is in reply): send the next byte.
        }
      }
    }
  }

  /** Every good answer against a single-threaded classification of its model and graph version. */
  private static void checkAgainstReference(
      long startVersion,
      Map<Long, AttentionModel> models,
      Map<Long, Update> updates,
      Queue<Answer> answers) {
    Map<Long, Map<Long, List<Answer>>> byVersion = new TreeMap<>();
    for (Answer a : answers) {
      byVersion
          .computeIfAbsent(a.graphVersion(), v -> new TreeMap<>())
          .computeIfAbsent(a.modelVersion(), m -> new ArrayList<>())
          .add(a);
    }
    int n = ACCOUNTS;
    Map<String, Integer> index = new HashMap<>();
    for (int i = 0; i < n; i++) {
      index.put(network.accountId(i), i);
    }
    List<int[]> edges = new ArrayList<>();
    int[] sources = network.transferSources();
    int[] targets = network.transferTargets();
    for (int e = 0; e < sources.length; e++) {
      edges.add(new int[] {sources[e], targets[e]});
    }
    float[] features = network.features().clone();
    long applied = startVersion;
    int checked = 0;
    for (Map.Entry<Long, Map<Long, List<Answer>>> version : byVersion.entrySet()) {
      while (applied < version.getKey()) {
        applied++;
        Update u = updates.get(applied);
        assertNotNull(u, "version " + applied + " was answered but no update gave it");
        for (int a = 0; a < u.accounts().size(); a++) {
          index.put(u.accounts().get(a), n++);
          features = Arrays.copyOf(features, n * 6);
          System.arraycopy(u.features().get(a), 0, features, (n - 1) * 6, 6);
        }
        for (String[] t : u.transfers()) {
          edges.add(new int[] {index.get(t[0]), index.get(t[1])});
        }
      }
      int[] s = edges.stream().mapToInt(e -> e[0]).toArray();
      int[] t = edges.stream().mapToInt(e -> e[1]).toArray();
      CsrGraph graph =
          CsrGraphBuilder.fromEdges(s, t, n)
              .direction(POLICIES.direction())
              .selfLoops(POLICIES.selfLoops())
              .duplicates(POLICIES.duplicates())
              .build();
      NodeFeatures x = NodeFeatures.ofRowMajor(features, n, 6);
      for (Map.Entry<Long, List<Answer>> model : version.getValue().entrySet()) {
        AttentionModel m = models.get(model.getKey());
        assertNotNull(m, "model version " + model.getKey());
        int[] nodes =
            model.getValue().stream().mapToInt(a -> index.get(a.node())).distinct().toArray();
        Classification expected =
            NodeClassifier.of(m, ClassifyOptions.defaults()).classify(graph, x, nodes);
        for (Answer a : model.getValue()) {
          float[] want = expected.forNode(index.get(a.node())).probabilities();
          for (int c = 0; c < want.length; c++) {
            assertEquals(
                want[c],
                a.probabilities()[c],
                1e-5 * Math.max(Math.abs(want[c]), 1e-3),
                a + " class " + c);
          }
          checked++;
        }
      }
    }
    assertEquals(answers.size(), checked);
    assertTrue(checked > REQUESTS_PER_LEVEL / 2, "most requests were good queries: " + checked);
  }

  /**
   * With the one turn to score on request held and two requests waiting for it, a third gets 503
   * with Retry-After at once, and so does an update past its own full line; lookups and health are
   * still answered; once the turns are given back, the waiting requests are answered.
   */
  @Test
  void aFullServiceAnswers503WithRetryAfterAndRecovers() throws Exception {
    try (ScoringService service = start(new ScoringService.Limits(1, 2, 16, 5000))) {
      List<CompletableFuture<HttpResponse<String>>> waiting = new ArrayList<>();
      String update =
          "{\"transfers\": [{\"source\": \"acct-000001\", \"target\": \"acct-000002\"}]}";
      try (Admission.Turn scoring = service.computing().enter();
          Admission.Turn updating = service.updating().enter()) {
        assertNotNull(scoring, "the only scoring turn was free");
        assertNotNull(updating, "the update turn was free");
        for (int k = 0; k < 2; k++) {
          waiting.add(sendAsync(service, "/score?node=acct-00000" + k + "&fresh=true", null));
          waiting.add(sendAsync(service, "/transfers", update));
        }
        long deadline = System.nanoTime() + TimeUnit.SECONDS.toNanos(20);
        while (service.computing().waiting() < 2 || service.updating().waiting() < 2) {
          assertTrue(System.nanoTime() < deadline, "two requests wait in each line");
          Thread.sleep(5);
        }
        HttpResponse<String> full = get(service, "/score?node=acct-000009&fresh=true");
        assertError(full, 503, "the service is busy", "a third query on request");
        assertEquals("1", full.headers().firstValue("Retry-After").orElse(""));
        HttpResponse<String> refused = post(service, update);
        assertError(refused, 503, "try again in 1 s", "a third update");
        assertEquals("1", refused.headers().firstValue("Retry-After").orElse(""));
        assertEquals(200, get(service, "/score?node=acct-000009").statusCode(), "a lookup");
        assertEquals(200, get(service, "/health").statusCode(), "health needs no turn");
        assertFalse(waiting.get(0).isDone(), "still waiting for the held turn");
        assertEquals(1L, service.version(), "no update applied yet");
      }
      for (CompletableFuture<HttpResponse<String>> w : waiting) {
        HttpResponse<String> r = w.get(30, TimeUnit.SECONDS);
        assertEquals(200, r.statusCode(), r.body());
      }
      assertEquals(3L, service.version(), "the two waiting updates, not the refused one");
    }
  }

  private static CompletableFuture<HttpResponse<String>> sendAsync(
      ScoringService service, String pathAndQuery, String body) {
    HttpRequest.Builder request =
        HttpRequest.newBuilder(service.uri(pathAndQuery)).timeout(REQUEST_TIMEOUT);
    request =
        body == null ? request.GET() : request.POST(HttpRequest.BodyPublishers.ofString(body));
    return client.sendAsync(request.build(), HttpResponse.BodyHandlers.ofString());
  }

  @Test
  void aModelThatDoesNotFitIsRefusedAndTheOldOneStays() throws Exception {
    try (ScoringService service = start(ScoringService.Limits.of(2))) {
      JsonNode before = JSON.readTree(get(service, "/score?node=acct-000003").body());
      IllegalArgumentException e =
          assertThrows(
              IllegalArgumentException.class, () -> service.reload(TestModel.build(SEED, 7)));
      assertTrue(e.getMessage().contains("reads 7"), e.getMessage());
      assertEquals(1L, service.modelVersion());
      assertEquals(before, JSON.readTree(get(service, "/score?node=acct-000003").body()));
      assertEquals(2L, service.reload(second));
      JsonNode after = JSON.readTree(get(service, "/score?node=acct-000003").body());
      assertEquals(2L, after.get("model_version").asLong());
      assertEquals(1L, after.get("version").asLong(), "the graph is kept");
    }
  }

  /** The service over the test network with the first model, on any free port. */
  private static ScoringService start(ScoringService.Limits limits) throws IOException {
    return ScoringService.start(
        first,
        PaymentsGraphs.toIndexedGraph(network),
        PaymentsGraphs.features(network),
        POLICIES,
        0,
        limits);
  }

  private static HttpResponse<String> get(ScoringService service, String pathAndQuery)
      throws Exception {
    return send(HttpRequest.newBuilder(service.uri(pathAndQuery)).GET());
  }

  private static HttpResponse<String> post(ScoringService service, String body) throws Exception {
    return send(
        HttpRequest.newBuilder(service.uri("/transfers"))
            .POST(HttpRequest.BodyPublishers.ofString(body)));
  }

  private static HttpResponse<String> send(HttpRequest.Builder request) throws Exception {
    return client.send(
        request.timeout(REQUEST_TIMEOUT).build(), HttpResponse.BodyHandlers.ofString());
  }

  private static void assertError(
      HttpResponse<String> response, int status, String message, String where) throws IOException {
    String body = response.body();
    assertEquals(status, response.statusCode(), where + ": " + body);
    JsonNode error = JSON.readTree(body);
    assertTrue(error.get("error").asText().contains(message), where + ": " + body);
    assertFalse(body.contains("Exception") || body.contains(".java"), where + ": " + body);
  }
}
