package dev.heed.examples;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import com.sun.net.httpserver.HttpExchange;
import com.sun.net.httpserver.HttpServer;
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
import java.net.InetSocketAddress;
import java.net.URI;
import java.net.URLDecoder;
import java.nio.charset.StandardCharsets;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import java.util.concurrent.ArrayBlockingQueue;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.ThreadFactory;
import java.util.concurrent.ThreadPoolExecutor;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * A minimal scoring service on the JDK's built-in HTTP server: it loads a model, a graph and its
 * features once at start-up, and answers "what does the model say about this account, and whom did
 * it look at?" over HTTP.
 *
 * <p>Scenario (invented): a payments platform asks, for one account at a time, for the demo model's
 * view of that account (ordinary, merchant or mule-ring, with probabilities), for example while an
 * operator reviews a case. The graph is the demo's invented payments network.
 *
 * <h2>Endpoints (GET only, JSON answers)</h2>
 *
 * <ul>
 *   <li>{@code /score?node=acct-000123&explain=3}: the account's label, its probability, every
 *       label's probability, and with {@code explain=k} (0 to {@value #MAX_EXPLAIN}, default 0) the
 *       k neighbours each attention layer attended to most, by account id. Served from the
 *       predictions computed at start-up.
 *   <li>{@code /score?node=acct-000123&explain=3&fresh=true}: the same, computed on request.
 *   <li>{@code /health}: {@code {"status":"ok","nodes":n}}.
 * </ul>
 *
 * Errors are JSON too, {@code {"error":"..."}}: 400 for a missing or malformed parameter, 404 for
 * an unknown account or path, 405 for another method. An unexpected failure gives 500 with a
 * generic message; the stack trace goes to the server's log, never to the client.
 *
 * <h2>Design</h2>
 *
 * <p><b>Precomputed by default.</b> A graph attention model's answer for one node depends on its
 * neighbourhood. With a graph and features that are fixed while the service runs, the cheapest
 * correct design is one forward pass at start-up (with explanations) and answers from memory
 * afterwards: each request then costs a hash lookup and some JSON. <b>On-demand</b> ({@code
 * fresh=true}) runs the model for that request; it shows the path a service would take when
 * features change between requests (then pass the current features instead of the start-up ones).
 * {@link NodeClassifier} then computes only the node's receptive field (its in-neighbourhood of as
 * many hops as the model has attention layers), not the whole graph.
 *
 * <p><b>Concurrency.</b> The model, the classifier, the graph and the features are immutable and
 * thread safe; each classify call uses its own scratch. Requests run on a fixed pool of {@code
 * threads} workers, so at most {@code threads} forward passes (and their memory) are in flight at
 * once. Requests beyond that wait in a queue of {@value #QUEUE_CAPACITY}; when the queue is full
 * the server's dispatcher thread runs the request itself, which pauses accepting new connections
 * (backpressure instead of unbounded memory).
 *
 * <p><b>Network.</b> It listens on the loopback interface (127.0.0.1) only; put a real gateway with
 * authentication in front of anything that leaves the machine.
 *
 * <pre>{@code
 * try (ScoringService service = ScoringService.start(model, graph, features, 0, 4)) {
 *   URI score = service.uri("/score?node=acct-000123&explain=3");
 *   // ... send requests ...
 * }
 * }</pre>
 *
 * <p>Run from the repository root (the script compiles what it needs, then runs the service with
 * {@code --add-modules jdk.incubator.vector}):
 *
 * <pre>
 * examples/run ScoringService path/to/model.heed 8080
 * curl 'http://127.0.0.1:8080/score?node=acct-000123&amp;explain=3'
 * </pre>
 *
 * Arguments: the model (a file, or {@code classpath:/dev/heed/demo/payments-demo.heed}, the bundled
 * demo model and the default), the port (default 8080) and the number of accounts (default: the
 * bundled demo's {@value PaymentsNetworkGenerator#DEFAULT_ACCOUNTS}, with its seed). Stop it with
 * Ctrl-C.
 *
 * <p>The outputs are model scores, not decisions.
 *
 * <p>Thread safety: {@link #close()} may be called from any thread, more than once.
 */
public final class ScoringService implements AutoCloseable {

  /** Most explanation neighbours a request may ask for. */
  public static final int MAX_EXPLAIN = 5;

  /** Requests that may wait for a worker before the dispatcher runs them itself. */
  public static final int QUEUE_CAPACITY = 256;

  /** Seconds {@link #close()} waits for requests in progress. */
  public static final int STOP_GRACE_SECONDS = 2;

  private static final Logger LOG = LoggerFactory.getLogger(ScoringService.class);
  private static final ObjectMapper JSON = new ObjectMapper();
  private static final Set<String> SCORE_PARAMETERS = Set.of("node", "explain", "fresh");

  /** Element k explains by k neighbours (none for 0). */
  private final NodeClassifier[] onRequest;

  private final IndexedGraph<String> graph;
  private final NodeFeatures features;
  private final Classification precomputed;
  private final HttpServer server;
  private final ThreadPoolExecutor workers;
  private final AtomicBoolean closed = new AtomicBoolean();

  private ScoringService(
      NodeClassifier[] onRequest,
      IndexedGraph<String> graph,
      NodeFeatures features,
      Classification precomputed,
      HttpServer server,
      ThreadPoolExecutor workers) {
    this.onRequest = onRequest;
    this.graph = graph;
    this.features = features;
    this.precomputed = precomputed;
    this.server = server;
    this.workers = workers;
  }

  /**
   * Classifies every node once, then starts serving on 127.0.0.1.
   *
   * @param model the model; its feature count must match {@code features}
   * @param graph the graph with the index from account ids to nodes
   * @param features one row per node, in node order
   * @param port the port, or 0 for any free port (see {@link #port()})
   * @param threads worker threads, at least 1
   * @return the running service
   * @throws IllegalArgumentException if the features do not fit the model or graph, or {@code
   *     threads} is below 1
   * @throws IOException if the port cannot be bound
   */
  public static ScoringService start(
      AttentionModel model,
      IndexedGraph<String> graph,
      NodeFeatures features,
      int port,
      int threads)
      throws IOException {
    Objects.requireNonNull(model, "model");
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    if (threads < 1) {
      throw new IllegalArgumentException("threads must be at least 1, got " + threads);
    }
    NodeClassifier[] onRequest = new NodeClassifier[MAX_EXPLAIN + 1];
    onRequest[0] = NodeClassifier.of(model, ClassifyOptions.defaults());
    for (int k = 1; k <= MAX_EXPLAIN; k++) {
      onRequest[k] = NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(k));
    }
    long started = System.nanoTime();
    Classification precomputed =
        NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(MAX_EXPLAIN))
            .classify(graph.graph(), features);
    LOG.info(
        "classified {} nodes in {} ms",
        graph.graph().nodeCount(),
        (System.nanoTime() - started) / 1_000_000);

    ThreadPoolExecutor workers =
        new ThreadPoolExecutor(
            threads,
            threads,
            0L,
            TimeUnit.MILLISECONDS,
            new ArrayBlockingQueue<>(QUEUE_CAPACITY),
            namedThreads(),
            new ThreadPoolExecutor.CallerRunsPolicy());
    HttpServer server;
    try {
      server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), port), 0);
    } catch (IOException e) {
      workers.shutdown();
      throw e;
    }
    ScoringService service =
        new ScoringService(onRequest, graph, features, precomputed, server, workers);
    server.createContext("/", service::handle);
    server.setExecutor(workers);
    server.start();
    LOG.info("scoring service listening on {}", service.uri("/"));
    return service;
  }

  /**
   * Returns the port the service listens on.
   *
   * @return the bound port
   */
  public int port() {
    return server.getAddress().getPort();
  }

  /**
   * Returns the address of a path on this service.
   *
   * @param pathAndQuery starts with {@code /}, for example {@code /score?node=acct-000001}
   * @return {@code http://127.0.0.1:port} followed by it
   */
  public URI uri(String pathAndQuery) {
    return URI.create(
        "http://"
            + server.getAddress().getAddress().getHostAddress()
            + ":"
            + port()
            + pathAndQuery);
  }

  /**
   * Stops accepting requests, waits up to {@value #STOP_GRACE_SECONDS} s for those in progress, and
   * stops the workers. Later calls do nothing.
   */
  @Override
  public void close() {
    if (!closed.compareAndSet(false, true)) {
      return;
    }
    server.stop(STOP_GRACE_SECONDS);
    workers.shutdown();
    try {
      if (!workers.awaitTermination(STOP_GRACE_SECONDS, TimeUnit.SECONDS)) {
        workers.shutdownNow();
      }
    } catch (InterruptedException e) {
      workers.shutdownNow();
      Thread.currentThread().interrupt();
    }
    LOG.info("scoring service stopped");
  }

  /** A request that cannot be answered, with its status and a message for the client. */
  private static final class RequestProblem extends Exception {
    private static final long serialVersionUID = 1L;
    private final int status;

    RequestProblem(int status, String message) {
      super(message, null, false, false);
      this.status = status;
    }
  }

  private void handle(HttpExchange exchange) {
    try (exchange) {
      int status = 200;
      ObjectNode body;
      try {
        body = answer(exchange);
      } catch (RequestProblem p) {
        status = p.status;
        body = error(p.getMessage());
        if (status == 405) {
          exchange.getResponseHeaders().set("Allow", "GET");
        }
      } catch (RuntimeException e) {
        LOG.error("failed to answer {}", exchange.getRequestURI(), e);
        status = 500;
        body = error("internal error; see the server log");
      }
      send(exchange, status, body);
    } catch (IOException e) {
      LOG.debug("could not send the answer to {}", exchange.getRemoteAddress(), e);
    }
  }

  private ObjectNode answer(HttpExchange exchange) throws RequestProblem {
    String path = exchange.getRequestURI().getPath();
    if (!path.equals("/score") && !path.equals("/health")) {
      throw new RequestProblem(404, "no such path '" + path + "'; use /score or /health");
    }
    if (!exchange.getRequestMethod().equals("GET")) {
      throw new RequestProblem(
          405, "method " + exchange.getRequestMethod() + " is not allowed; use GET");
    }
    if (path.equals("/health")) {
      ObjectNode health = JSON.createObjectNode();
      health.put("status", "ok");
      health.put("nodes", graph.graph().nodeCount());
      return health;
    }
    Map<String, String> query = parseQuery(exchange.getRequestURI().getRawQuery());
    String id = query.get("node");
    if (id == null || id.isEmpty()) {
      throw new RequestProblem(400, "missing parameter 'node' (an account id)");
    }
    int node = graph.nodes().indexOf(id);
    if (node < 0) {
      throw new RequestProblem(404, "unknown node '" + id + "'");
    }
    int explain = parseExplain(query.get("explain"));
    boolean fresh = parseFresh(query.get("fresh"));
    NodePrediction prediction =
        fresh
            ? onRequest[explain].classify(graph.graph(), features, node).predictions().get(0)
            : precomputed.forNode(node);
    return render(prediction, explain, fresh);
  }

  private ObjectNode render(NodePrediction p, int explain, boolean fresh) {
    ObjectNode out = JSON.createObjectNode();
    out.put("node", graph.nodes().idOf(p.node()));
    out.put("label", p.label());
    out.put("probability", p.probability());
    ObjectNode probabilities = out.putObject("probabilities");
    float[] all = p.probabilities();
    List<String> labels = precomputed.classLabels();
    for (int c = 0; c < all.length; c++) {
      probabilities.put(labels.get(c), all[c]);
    }
    if (explain > 0) {
      ArrayNode layers = out.putArray("explanation");
      for (LayerExplanation layer : p.explanation().orElseThrow()) {
        ObjectNode entry = layers.addObject();
        entry.put("layer", layer.layerName());
        ArrayNode neighbours = entry.putArray("neighbours");
        // Precomputed lists hold the top MAX_EXPLAIN, best first; their first k are the top k.
        List<NeighbourWeight> top = layer.topNeighbours();
        for (NeighbourWeight w : top.subList(0, Math.min(explain, top.size()))) {
          ObjectNode n = neighbours.addObject();
          n.put("node", graph.nodes().idOf(w.node()));
          n.put("weight", w.weight());
        }
      }
    }
    out.put("computed", fresh ? "on-request" : "at-start-up");
    return out;
  }

  private static Map<String, String> parseQuery(String rawQuery) throws RequestProblem {
    Map<String, String> query = new HashMap<>();
    if (rawQuery == null || rawQuery.isEmpty()) {
      return query;
    }
    for (String pair : rawQuery.split("&", -1)) {
      int eq = pair.indexOf('=');
      String key = decode(eq < 0 ? pair : pair.substring(0, eq));
      String value = eq < 0 ? "" : decode(pair.substring(eq + 1));
      if (!SCORE_PARAMETERS.contains(key)) {
        throw new RequestProblem(
            400, "unknown parameter '" + key + "'; expected " + SCORE_PARAMETERS);
      }
      if (query.put(key, value) != null) {
        throw new RequestProblem(400, "parameter '" + key + "' given more than once");
      }
    }
    return query;
  }

  private static String decode(String raw) throws RequestProblem {
    // The JDK's server already refuses request lines that are not valid URIs (with its own 400);
    // this is a second line of defence.
    try {
      return URLDecoder.decode(raw, StandardCharsets.UTF_8);
    } catch (IllegalArgumentException e) {
      throw new RequestProblem(400, "malformed %-escape in the query");
    }
  }

  private static int parseExplain(String value) throws RequestProblem {
    if (value == null) {
      return 0;
    }
    int k;
    try {
      k = Integer.parseInt(value);
    } catch (NumberFormatException e) {
      k = -1;
    }
    if (k < 0 || k > MAX_EXPLAIN) {
      throw new RequestProblem(
          400,
          "'explain' must be a whole number from 0 to " + MAX_EXPLAIN + ", got '" + value + "'");
    }
    return k;
  }

  private static boolean parseFresh(String value) throws RequestProblem {
    if (value == null || value.equals("false")) {
      return false;
    }
    if (value.equals("true")) {
      return true;
    }
    throw new RequestProblem(400, "'fresh' must be true or false, got '" + value + "'");
  }

  private static ObjectNode error(String message) {
    ObjectNode body = JSON.createObjectNode();
    body.put("error", message);
    return body;
  }

  private static void send(HttpExchange exchange, int status, ObjectNode body) throws IOException {
    byte[] bytes = JSON.writeValueAsBytes(body);
    exchange.getResponseHeaders().set("Content-Type", "application/json; charset=utf-8");
    exchange.sendResponseHeaders(status, bytes.length);
    try (OutputStream out = exchange.getResponseBody()) {
      out.write(bytes);
    }
  }

  private static ThreadFactory namedThreads() {
    AtomicInteger count = new AtomicInteger();
    return task -> {
      Thread t = new Thread(task, "scoring-worker-" + count.incrementAndGet());
      t.setDaemon(true);
      return t;
    };
  }

  /**
   * Runs the service until the JVM is stopped.
   *
   * @param args optional: model location (default {@link ModelSource#DEMO_MODEL}), port (default
   *     8080), number of accounts (default the bundled demo's)
   * @throws IOException if the model cannot be read or the port bound
   * @throws InterruptedException if interrupted while serving
   */
  public static void main(String[] args) throws IOException, InterruptedException {
    String location = args.length > 0 ? args[0] : ModelSource.DEMO_MODEL;
    int port = args.length > 1 ? Integer.parseInt(args[1]) : 8080;
    PaymentsNetworkGenerator generator =
        args.length > 2
            ? PaymentsNetworkGenerator.of(
                Integer.parseInt(args[2]),
                Integer.parseInt(args[2]) * 10,
                PaymentsNetworkGenerator.DEFAULT_SEED)
            : PaymentsNetworkGenerator.bundledDemo();
    AttentionModel model = ModelSource.load(location);
    PaymentsNetwork network = generator.generate();
    ScoringService service =
        start(
            model,
            PaymentsGraphs.toIndexedGraph(network),
            PaymentsGraphs.features(network),
            port,
            Math.max(2, Runtime.getRuntime().availableProcessors()));
    CountDownLatch stopped = new CountDownLatch(1);
    Runtime.getRuntime()
        .addShutdownHook(
            new Thread(
                () -> {
                  service.close();
                  stopped.countDown();
                }));
    System.out.println("try: curl '" + service.uri("/score?node=acct-000123&explain=3") + "'");
    stopped.await();
  }
}
