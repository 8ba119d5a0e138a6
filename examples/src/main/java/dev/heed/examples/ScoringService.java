package dev.heed.examples;

import com.fasterxml.jackson.databind.JsonNode;
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
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.IndexedGraph;
import dev.heed.live.BatchResult;
import dev.heed.live.CompactedSnapshot;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RejectedUpdateException;
import dev.heed.live.ScoreState;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.io.OutputStream;
import java.net.InetAddress;
import java.net.InetSocketAddress;
import java.net.URI;
import java.net.URLDecoder;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.HashMap;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import java.util.concurrent.ArrayBlockingQueue;
import java.util.concurrent.CountDownLatch;
import java.util.concurrent.RejectedExecutionException;
import java.util.concurrent.ThreadFactory;
import java.util.concurrent.ThreadPoolExecutor;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * A minimal scoring service on the JDK's built-in HTTP server: it loads a model, a graph and its
 * features once at start-up, answers "what does the model say about this account, and whom did it
 * look at?" over HTTP, and takes new accounts and transfers as they happen, so that its answers
 * stay exact for the graph as it is now.
 *
 * <p>Scenario (invented): a payments platform asks, for one account at a time, for the demo model's
 * view of that account (ordinary, merchant or mule-ring, with probabilities), for example while an
 * operator reviews a case. The graph is the demo's invented payments network.
 *
 * <h2>Endpoints (JSON answers)</h2>
 *
 * <ul>
 *   <li>{@code GET /score?node=acct-000123&explain=3}: the account's label, its probability, every
 *       label's probability, the graph {@code version} they reflect, and with {@code explain=k} (0
 *       to {@value #MAX_EXPLAIN}, default 0) the k neighbours each attention layer attended to
 *       most, by account id. Served from the score table (see below); an explanation of a score
 *       refreshed since start-up is computed on request. A score the table does not hold yet for
 *       its version is answered with {@code "state": "pending"} and no probabilities, never with an
 *       older score.
 *   <li>{@code GET /score?node=acct-000123&explain=3&fresh=true}: the same, computed on request
 *       from the same version.
 *   <li>{@code POST /transfers} with a JSON body {@code {"accounts": [{"id": "acct-new",
 *       "features": [six numbers]}], "transfers": [{"source": "acct-000007", "target":
 *       "acct-new"}], "recalled": [{"source": ..., "target": ...}]}} (every key optional): adds the
 *       new accounts, then the transfers, then removes the recalled transfers' edges, all in one
 *       version, or none of it. The answer gives the new {@code version}, how many nodes changed
 *       and were rescored ({@code pending}: how many of those are not computed yet, 0 with the
 *       unlimited refresh used here), and every account whose top label changed ({@code
 *       label_changes}).
 *   <li>{@code GET /health}: {@code {"status":"ok","nodes":n,"version":v,"model_version":m}}.
 * </ul>
 *
 * Every answer that is not an error names the graph {@code version} and the {@code model_version}
 * (1 at start-up, one more per {@link #reload}) it was computed from.
 *
 * <p>Errors are JSON too, {@code {"error":"..."}}: 400 for a missing or malformed parameter or body
 * (an unknown account, a recalled transfer that is not there, an account added twice, features of
 * the wrong width or not finite: the update is refused whole and nothing changes), 404 for an
 * unknown account or path, 405 for another method, 408 for a request whose body has not arrived
 * {@value #READ_TIMEOUT_MILLIS} ms after its first byte (the connection is then closed), 413 for a
 * body over {@value #MAX_BODY_BYTES} bytes, and 503 with {@code Retry-After} when a request that
 * needs a turn (an update, or a score computed on request) finds {@value #QUEUE_CAPACITY} requests
 * already waiting for one. An unexpected failure gives 500 with a generic message; the stack trace
 * goes to the server's log, never to the client.
 *
 * <h2>Design</h2>
 *
 * <p><b>A score table, kept exact.</b> A graph attention model's answer for one node depends on its
 * neighbourhood. The service makes one forward pass at start-up (with explanations) and answers
 * from that table: each request costs a lookup and some JSON. The graph lives in a {@link
 * VersionedGraph}; an {@link dev.heed.live.IncrementalScorer} follows it, keeping every node's
 * layer outputs. An update is applied as one batch, the scorer is refreshed (recomputing only the
 * nodes the update reached: the changed nodes and those downstream of them, as many hops as the
 * model has attention layers; see {@code LiveScores}), their new scores are read from it, and a new
 * table (version, snapshot, scores) is published in one step. A model with full self-attention,
 * which the scorer refuses, has every node scored again over its receptive field instead. So every
 * answer is exact for the version it names, and a reader never sees half an update.
 * <b>On-demand</b> ({@code fresh=true}) runs the model for that request on the table's version;
 * {@link NodeClassifier} then computes only the node's receptive field (its in-neighbourhood of as
 * many hops as the model has attention layers).
 *
 * <p><b>Concurrency.</b> The model, the classifier, the graph and the features are immutable and
 * thread safe; each classify call uses its own scratch. Updates are applied one at a time (a lock),
 * so a slow update delays the next update, never a score query. What a query reads (model,
 * classifiers, graph version, score table) is one immutable state, published in one volatile write:
 * an update or a {@link #reload} builds the next state beside the current one and swaps it in, so a
 * request in flight finishes on the state it started with.
 *
 * <p><b>Limits.</b> Each request is read and answered on a connection thread (the JDK server's
 * executor). A request must arrive whole within {@value #READ_TIMEOUT_MILLIS} ms of its first byte
 * ({@code RequestDeadlines}): a slow or stalled client is answered 408 (body late) or has its
 * connection closed (headers late), so it holds a thread for that long at most. A score read from
 * the table is a lookup and is answered at once. Work that costs a model run waits for a turn
 * ({@code Admission}): at most {@code threads} scores computed on request at once, and one update
 * at a time, each with a line of at most {@value #QUEUE_CAPACITY} waiting; a request that finds its
 * line full gets 503 at once, never a growing queue. Updates have a line of their own so that
 * updates waiting for the one before them never hold the turns of queries. Connection threads are
 * bounded too ({@code threads + 1 + 2 ·} {@value #QUEUE_CAPACITY} {@code +} {@value
 * #SLOW_CLIENT_THREADS}: those computing and waiting, plus room for lookups and clients still
 * sending); connections beyond them wait in a backlog of {@value #CONNECTION_BACKLOG}, and past
 * that the server closes them. A server's dispatcher thread never runs a request itself: a slow
 * client there would stop every other connection.
 *
 * <p><b>Network.</b> It listens on the loopback interface (127.0.0.1) only; put a real gateway with
 * authentication in front of anything that leaves the machine. The JDK's server leaves Nagle's
 * algorithm on unless the system property {@code sun.net.httpserver.nodelay} is true; then a small
 * answer written in two parts waits for the client's delayed acknowledgement (about 40 ms on
 * Linux), which capped 8 clients at about 160 requests per second here, against about 2,000 with it
 * on ({@code benchmarks/RESULTS.md}). So {@link #start} sets the property to true when it is not
 * set; the JDK reads it once, when its first server in the JVM starts, so an application that
 * starts another JDK server first should pass {@code -Dsun.net.httpserver.nodelay=true} itself.
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
 * curl -d '{"transfers": [{"source": "acct-000007", "target": "acct-000123"}]}' \
 *     http://127.0.0.1:8080/transfers
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

  /**
   * Requests that may wait for a turn (to score on request, or to update) before the service
   * answers 503.
   */
  public static final int QUEUE_CAPACITY = 64;

  /** Largest request body {@code POST /transfers} accepts, in bytes. */
  public static final int MAX_BODY_BYTES = 1 << 20;

  /** Time a request may take to arrive, from its first byte to the end of its body. */
  public static final int READ_TIMEOUT_MILLIS = 10_000;

  /** Seconds a client is asked to wait after a 503 ({@code Retry-After}). */
  public static final int RETRY_AFTER_SECONDS = 1;

  /** Connection threads beyond those computing and waiting, for clients still sending. */
  public static final int SLOW_CLIENT_THREADS = 32;

  /** Connections with a request arriving that may wait for a connection thread. */
  public static final int CONNECTION_BACKLOG = 256;

  /** Seconds {@link #close()} waits for requests in progress. */
  public static final int STOP_GRACE_SECONDS = 2;

  /**
   * The JDK server's switch for TCP_NODELAY on accepted connections (documented in the {@code
   * jdk.httpserver} module), read once per JVM when its first server starts.
   */
  static final String NO_DELAY_PROPERTY = "sun.net.httpserver.nodelay";

  private static final Logger LOG = LoggerFactory.getLogger(ScoringService.class);
  private static final ObjectMapper JSON = new ObjectMapper();
  private static final Set<String> SCORE_PARAMETERS = Set.of("node", "explain", "fresh");
  private static final Set<String> UPDATE_KEYS = Set.of("accounts", "transfers", "recalled");
  private static final ClassifyOptions EXPLAINED =
      ClassifyOptions.defaults().withExplanations(MAX_EXPLAIN);

  /**
   * The service's limits.
   *
   * @param threads scores computed on request at once, at least 1
   * @param waiting requests that may wait for a turn, per line (scoring, updates), at least 0
   * @param connectionThreads threads reading and answering requests, at least {@code threads}
   * @param readTimeoutMillis time a request may take to arrive, at least 1
   */
  record Limits(int threads, int waiting, int connectionThreads, long readTimeoutMillis) {

    Limits {
      if (threads < 1) {
        throw new IllegalArgumentException("threads must be at least 1, got " + threads);
      }
      if (waiting < 0 || connectionThreads < threads || readTimeoutMillis < 1) {
        throw new IllegalArgumentException(
            "need waiting >= 0, connectionThreads >= threads and readTimeoutMillis >= 1, got "
                + this);
      }
    }

    /** The documented defaults for {@code threads} computing threads. */
    static Limits of(int threads) {
      return new Limits(
          threads,
          QUEUE_CAPACITY,
          threads < 1 ? threads : threads + 1 + 2 * QUEUE_CAPACITY + SLOW_CLIENT_THREADS,
          READ_TIMEOUT_MILLIS);
    }
  }

  /**
   * What queries read, published together in one volatile write: the model and its classifiers
   * (element k of {@code onRequest} explains by k neighbours), one version of the graph and every
   * node's score for that model and version. {@code rescoring} follows the live graph for this
   * model and is used only under the update lock.
   */
  private record State(
      long modelVersion,
      NodeClassifier[] onRequest,
      List<String> labels,
      LiveScores rescoring,
      LiveSnapshot<String> snapshot,
      LiveScores.Score[] scores) {

    State next(LiveSnapshot<String> newSnapshot, LiveScores.Score[] newScores) {
      return new State(modelVersion, onRequest, labels, rescoring, newSnapshot, newScores);
    }
  }

  private final VersionedGraph<String> live;
  private final Object updateLock = new Object();
  private volatile State state;
  private final HttpServer server;
  private final ThreadPoolExecutor connections;
  private final RequestDeadlines deadlines;
  private final Admission computing;
  private final Admission updating;
  private final AtomicBoolean closed = new AtomicBoolean();

  private ScoringService(
      VersionedGraph<String> live,
      State state,
      HttpServer server,
      ThreadPoolExecutor connections,
      RequestDeadlines deadlines,
      Limits limits) {
    this.live = live;
    this.state = state;
    this.server = server;
    this.connections = connections;
    this.deadlines = deadlines;
    this.computing = new Admission(limits.threads(), limits.waiting());
    this.updating = new Admission(1, limits.waiting());
  }

  /**
   * Classifies every node once, then starts serving on 127.0.0.1. Updates grow the graph with the
   * model's recorded graph policies, or symmetrised with self-loops ({@link
   * GraphPolicies#UNDIRECTED_WITH_SELF_LOOPS}, the demo's) when it records none.
   *
   * @param model the model; its feature count must match {@code features}
   * @param graph the graph with the index from account ids to nodes, built with those policies
   * @param features one row per node, in node order
   * @param port the port, or 0 for any free port (see {@link #port()})
   * @param threads scores computed on request at once, at least 1
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
    return start(
        model,
        graph,
        features,
        model.graphPolicies().orElse(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS),
        port,
        threads);
  }

  /**
   * {@link #start(AttentionModel, IndexedGraph, NodeFeatures, int, int)} with the graph policies
   * the graph was built with, which updates follow.
   *
   * @param model the model; its feature count must match {@code features}
   * @param graph the graph with the index from account ids to nodes
   * @param features one row per node, in node order
   * @param policies how {@code graph} was built from its edges
   * @param port the port, or 0 for any free port
   * @param threads scores computed on request at once, at least 1
   * @return the running service
   * @throws IllegalArgumentException if the features do not fit the model or graph, or {@code
   *     threads} is below 1
   * @throws IOException if the port cannot be bound
   */
  public static ScoringService start(
      AttentionModel model,
      IndexedGraph<String> graph,
      NodeFeatures features,
      GraphPolicies policies,
      int port,
      int threads)
      throws IOException {
    return start(model, graph, features, policies, port, Limits.of(threads));
  }

  /** Starts with the given limits (tests use small ones). */
  static ScoringService start(
      AttentionModel model,
      IndexedGraph<String> graph,
      NodeFeatures features,
      GraphPolicies policies,
      int port,
      Limits limits)
      throws IOException {
    Objects.requireNonNull(model, "model");
    Objects.requireNonNull(policies, "policies");
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(limits, "limits");
    long started = System.nanoTime();
    Classification precomputed =
        NodeClassifier.of(model, EXPLAINED).classify(graph.graph(), features);
    LOG.info(
        "classified {} nodes in {} ms",
        graph.graph().nodeCount(),
        (System.nanoTime() - started) / 1_000_000);
    VersionedGraph<String> live = LiveScores.load(graph, features, policies);
    State state = stateFor(1, model, live, precomputed);

    ThreadPoolExecutor connections =
        new ThreadPoolExecutor(
            limits.connectionThreads(),
            limits.connectionThreads(),
            30L,
            TimeUnit.SECONDS,
            new ArrayBlockingQueue<>(CONNECTION_BACKLOG),
            namedThreads("scoring-connection-"),
            (task, pool) -> {
              // The server closes a connection whose task its executor refuses.
              LOG.warn(
                  "{} connections are being served and {} wait; closing a new one",
                  pool.getActiveCount(),
                  pool.getQueue().size());
              throw new RejectedExecutionException("connection backlog full");
            });
    connections.allowCoreThreadTimeOut(true);
    RequestDeadlines deadlines = new RequestDeadlines(limits.readTimeoutMillis());
    if (System.getProperty(NO_DELAY_PROPERTY) == null) {
      System.setProperty(NO_DELAY_PROPERTY, "true");
    }
    HttpServer server;
    try {
      server = HttpServer.create(new InetSocketAddress(InetAddress.getLoopbackAddress(), port), 0);
    } catch (IOException e) {
      connections.shutdown();
      deadlines.close();
      state.rescoring().close();
      live.close();
      throw e;
    }
    ScoringService service =
        new ScoringService(live, state, server, connections, deadlines, limits);
    server.createContext("/", service::handle);
    server.setExecutor(deadlines.wrap(connections));
    server.start();
    LOG.info("scoring service listening on {} with {}", service.uri("/"), limits);
    return service;
  }

  /**
   * A state for {@code model} at the live graph's current version, whose scores {@code precomputed}
   * holds; its rescoring follows the live graph from that version.
   */
  private static State stateFor(
      long modelVersion,
      AttentionModel model,
      VersionedGraph<String> live,
      Classification precomputed) {
    NodeClassifier[] onRequest = new NodeClassifier[MAX_EXPLAIN + 1];
    onRequest[0] = NodeClassifier.of(model, ClassifyOptions.defaults());
    for (int k = 1; k <= MAX_EXPLAIN; k++) {
      onRequest[k] = NodeClassifier.of(model, ClassifyOptions.defaults().withExplanations(k));
    }
    LiveScores rescoring = new LiveScores(model, EXPLAINED, live);
    if (!rescoring.incremental()) {
      LOG.info(
          "the model has full self-attention, which incremental refresh refuses; every update"
              + " scores every node again");
    }
    return new State(
        modelVersion,
        onRequest,
        model.classLabels(),
        rescoring,
        live.snapshot(),
        precomputed.predictions().stream()
            .map(LiveScores.Score::of)
            .toArray(LiveScores.Score[]::new));
  }

  /**
   * Replaces the model, keeping the graph: classifies every node of the current version with {@code
   * model} (as at start-up, beside the state being served), then swaps the new state in. Requests
   * already running finish on the old model; every request that starts after the swap uses the new
   * one; each answer's {@code model_version} says which. Updates wait while a reload runs.
   *
   * @param model the new model; it must read the graph's feature count
   * @return the new model version (the first model is 1)
   * @throws IllegalArgumentException if the model does not fit the graph's features; the old model
   *     stays in service
   * @throws IllegalStateException if the service is closed
   */
  public long reload(AttentionModel model) {
    Objects.requireNonNull(model, "model");
    synchronized (updateLock) {
      if (closed.get()) {
        throw new IllegalStateException("the service is closed");
      }
      State before = state;
      long started = System.nanoTime();
      CompactedSnapshot<String> now = live.snapshot().compacted();
      Classification precomputed =
          NodeClassifier.of(model, EXPLAINED).classify(now.graph(), now.features());
      State next = stateFor(before.modelVersion() + 1, model, live, precomputed);
      if (next.snapshot().version() != now.version()) {
        throw new IllegalStateException("the graph changed outside the update lock");
      }
      state = next;
      before.rescoring().close();
      LOG.info(
          "model {} in service for graph version {} ({} ms)",
          next.modelVersion(),
          now.version(),
          (System.nanoTime() - started) / 1_000_000);
      return next.modelVersion();
    }
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
   * stops the connection threads. Later calls do nothing.
   */
  @Override
  public void close() {
    if (!closed.compareAndSet(false, true)) {
      return;
    }
    server.stop(STOP_GRACE_SECONDS);
    connections.shutdown();
    try {
      if (!connections.awaitTermination(STOP_GRACE_SECONDS, TimeUnit.SECONDS)) {
        connections.shutdownNow();
      }
    } catch (InterruptedException e) {
      connections.shutdownNow();
      Thread.currentThread().interrupt();
    }
    deadlines.close();
    synchronized (updateLock) {
      state.rescoring().close();
    }
    live.close();
    LOG.info("scoring service stopped");
  }

  /**
   * Returns the graph version score queries answer from now.
   *
   * @return the version, 1 after start-up
   */
  public long version() {
    return state.snapshot().version();
  }

  /**
   * Returns the version of the model in service now.
   *
   * @return 1 for the model the service started with, one more after each {@link #reload}
   */
  public long modelVersion() {
    return state.modelVersion();
  }

  /** The turns to score on request (tests take turns to fill them). */
  Admission computing() {
    return computing;
  }

  /** The turn to apply an update (tests take it to fill the line). */
  Admission updating() {
    return updating;
  }

  /**
   * A request that cannot be answered, with its status, a message for the client and optionally one
   * header (for example {@code Allow} or {@code Retry-After}).
   */
  private static final class RequestProblem extends Exception {
    private static final long serialVersionUID = 1L;
    private final int status;
    private final String header;
    private final String value;

    RequestProblem(int status, String message) {
      this(status, message, null, null);
    }

    RequestProblem(int status, String message, String header, String value) {
      super(message, null, false, false);
      this.status = status;
      this.header = header;
      this.value = value;
    }
  }

  /** The request did not arrive in time; the deadline's watchdog has answered for it. */
  private static final class ArrivedTooLate extends Exception {
    private static final long serialVersionUID = 1L;

    ArrivedTooLate() {
      super("the request did not arrive in time", null, false, false);
    }
  }

  private void handle(HttpExchange exchange) {
    RequestDeadlines.Request arriving = deadlines.current(exchange);
    try (exchange) {
      int status = 200;
      ObjectNode body;
      try {
        body = answer(exchange, readBody(exchange, arriving));
      } catch (ArrivedTooLate late) {
        return;
      } catch (RequestProblem p) {
        status = p.status;
        body = error(p.getMessage());
        if (p.header != null) {
          exchange.getResponseHeaders().set(p.header, p.value);
        }
      } catch (RuntimeException e) {
        LOG.error("failed to answer {}", exchange.getRequestURI(), e);
        status = 500;
        body = error("internal error; see the server log");
      }
      if (arriving.claimAnswer()) {
        send(exchange, status, body);
      }
    } catch (IOException e) {
      LOG.debug("could not read the request from or answer {}", exchange.getRemoteAddress(), e);
    }
  }

  /**
   * Reads the whole body (empty for most GETs) under the request's deadline, without closing the
   * stream: a body over the limit is left for the server to drain or drop after the answer.
   */
  private static byte[] readBody(HttpExchange exchange, RequestDeadlines.Request arriving)
      throws IOException, RequestProblem, ArrivedTooLate {
    byte[] body;
    try {
      body = exchange.getRequestBody().readNBytes(MAX_BODY_BYTES + 1);
    } catch (IOException e) {
      if (arriving.expired()) {
        throw new ArrivedTooLate();
      }
      throw e;
    }
    if (body.length > MAX_BODY_BYTES) {
      throw new RequestProblem(
          413,
          "the body is over " + MAX_BODY_BYTES + " bytes; send the updates in parts",
          "Connection",
          "close");
    }
    if (!arriving.received()) {
      throw new ArrivedTooLate();
    }
    return body;
  }

  private ObjectNode answer(HttpExchange exchange, byte[] body) throws RequestProblem {
    String path = exchange.getRequestURI().getPath();
    String method = exchange.getRequestMethod();
    if (!path.equals("/score") && !path.equals("/health") && !path.equals("/transfers")) {
      throw new RequestProblem(
          404, "no such path '" + path + "'; use /score, /transfers or /health");
    }
    String allowed = path.equals("/transfers") ? "POST" : "GET";
    if (!method.equals(allowed)) {
      throw new RequestProblem(
          405,
          "method " + method + " is not allowed on " + path + "; use " + allowed,
          "Allow",
          allowed);
    }
    if (path.equals("/health")) {
      State now = state;
      ObjectNode health = JSON.createObjectNode();
      health.put("status", "ok");
      health.put("nodes", now.snapshot().nodeCount());
      health.put("version", now.snapshot().version());
      health.put("model_version", now.modelVersion());
      return health;
    }
    if (path.equals("/transfers")) {
      // Updates run one at a time anyway; a line of its own keeps them from taking the turns of
      // queries computed on request, and bounds how many may pile up.
      Admission.Turn turn = enter(updating);
      try {
        return update(body);
      } finally {
        turn.close();
      }
    }
    return score(parseQuery(exchange.getRequestURI().getRawQuery()));
  }

  /**
   * Takes a turn of {@code line}, or refuses the request with 503 when its waiting line is full.
   */
  private static Admission.Turn enter(Admission line) throws RequestProblem {
    Admission.Turn turn = line.enter();
    if (turn == null) {
      throw new RequestProblem(
          503,
          "the service is busy (every turn is taken and "
              + line.waitingLimit()
              + " requests wait); try again in "
              + RETRY_AFTER_SECONDS
              + " s",
          "Retry-After",
          Integer.toString(RETRY_AFTER_SECONDS));
    }
    return turn;
  }

  private ObjectNode score(Map<String, String> query) throws RequestProblem {
    State now = state;
    String id = query.get("node");
    if (id == null || id.isEmpty()) {
      throw new RequestProblem(400, "missing parameter 'node' (an account id)");
    }
    int node = now.snapshot().nodes().indexOf(id);
    if (node < 0) {
      throw new RequestProblem(404, "unknown node '" + id + "'");
    }
    int explain = parseExplain(query.get("explain"));
    boolean fresh = parseFresh(query.get("fresh"));
    LiveScores.Score entry = now.scores()[node];
    if (!fresh && entry.state() != ScoreState.FRESH) {
      ObjectNode pending = JSON.createObjectNode();
      pending.put("node", id);
      pending.put("state", entry.state().name().toLowerCase(Locale.ROOT));
      pending.put("version", now.snapshot().version());
      pending.put("model_version", now.modelVersion());
      pending.put(
          "message", "the score of this version is not computed yet; ask again, or add fresh=true");
      return pending;
    }
    // Scores refreshed by the incremental scorer carry no attention weights: explain on request.
    boolean onRequestNow = fresh || (explain > 0 && entry.explained() == null);
    if (!onRequestNow) {
      return render(now, entry, explain, false); // a lookup: no turn needed
    }
    Admission.Turn turn = enter(computing);
    try {
      LiveScores.Score score =
          LiveScores.Score.of(
              now.onRequest()[explain]
                  .classifyFromRows(now.snapshot(), now.snapshot(), node)
                  .predictions()
                  .get(0));
      return render(now, score, explain, true);
    } finally {
      turn.close();
    }
  }

  /**
   * Applies one update: parses the whole body first, records it as one batch, applies it (whole or
   * not at all), scores the nodes it can have changed and publishes the new state.
   */
  private ObjectNode update(byte[] body) throws RequestProblem {
    JsonNode request;
    try {
      request = JSON.readTree(body);
    } catch (IOException e) {
      throw new RequestProblem(400, "the body is not valid JSON: " + firstLine(e.getMessage()));
    }
    if (request == null || !request.isObject()) {
      throw new RequestProblem(
          400, "the body must be a JSON object with 'accounts', 'transfers' and/or 'recalled'");
    }
    for (Iterator<String> keys = request.fieldNames(); keys.hasNext(); ) {
      String key = keys.next();
      if (!UPDATE_KEYS.contains(key)) {
        throw new RequestProblem(400, "unknown key '" + key + "'; expected " + UPDATE_KEYS);
      }
    }
    synchronized (updateLock) {
      if (closed.get()) {
        throw new RequestProblem(503, "the service is stopping");
      }
      UpdateBatch<String> batch = live.newBatch();
      for (JsonNode account : items(request, "accounts")) {
        String id = text(account, "id", "accounts");
        JsonNode values = account.get("features");
        if (values == null || !values.isArray() || account.size() != 2) {
          throw new RequestProblem(
              400, "each of 'accounts' is {\"id\": ..., \"features\": [numbers]}");
        }
        float[] x = new float[values.size()];
        for (int k = 0; k < x.length; k++) {
          if (!values.get(k).isNumber()) {
            throw new RequestProblem(
                400, "feature " + k + " of account '" + id + "' is not a number");
          }
          x[k] = values.get(k).floatValue();
        }
        try {
          batch.addNode(id, x);
        } catch (IllegalArgumentException e) {
          throw new RequestProblem(400, e.getMessage());
        }
      }
      for (JsonNode transfer : items(request, "transfers")) {
        batch.addEdge(text(transfer, "source", "transfers"), text(transfer, "target", "transfers"));
      }
      for (JsonNode recalled : items(request, "recalled")) {
        batch.removeEdge(
            text(recalled, "source", "recalled"), text(recalled, "target", "recalled"));
      }
      if (batch.isEmpty()) {
        throw new RequestProblem(400, "the update is empty; nothing to apply");
      }
      BatchResult result;
      try {
        result = live.apply(batch);
      } catch (RejectedUpdateException e) {
        throw new RequestProblem(400, e.getMessage());
      }
      LiveSnapshot<String> snapshot = live.snapshot();
      State before = state;
      List<LiveScores.Score> fresh = before.rescoring().refresh(snapshot);
      LiveScores.Score[] scores = Arrays.copyOf(before.scores(), snapshot.nodeCount());
      ObjectNode answer = JSON.createObjectNode();
      answer.put("version", snapshot.version());
      answer.put("model_version", before.modelVersion());
      answer.put("nodes", snapshot.nodeCount());
      answer.put("changed_nodes", result.changedNodeCount());
      answer.put("rescored", fresh.size());
      int pending = 0;
      ArrayNode changes = answer.putArray("label_changes");
      for (LiveScores.Score p : fresh) {
        LiveScores.Score old = scores[p.node()];
        scores[p.node()] = p;
        if (p.state() != ScoreState.FRESH) {
          pending++;
          continue;
        }
        boolean hadLabel = old != null && old.state() == ScoreState.FRESH;
        if (!hadLabel || old.labelIndex() != p.labelIndex()) {
          ObjectNode change = changes.addObject();
          change.put("node", snapshot.nodes().idOf(p.node()));
          change.put("old_label", hadLabel ? old.label() : null);
          change.put("label", p.label());
          change.put("probability", p.probability());
        }
      }
      answer.put("pending", pending);
      state = before.next(snapshot, scores);
      return answer;
    }
  }

  private static Iterable<JsonNode> items(JsonNode request, String key) throws RequestProblem {
    JsonNode list = request.get(key);
    if (list == null) {
      return List.of();
    }
    if (!list.isArray()) {
      throw new RequestProblem(400, "'" + key + "' must be a JSON array");
    }
    return list;
  }

  private static String text(JsonNode item, String field, String key) throws RequestProblem {
    JsonNode value = item.isObject() ? item.get(field) : null;
    if (value == null || !value.isTextual() || value.asText().isEmpty()) {
      throw new RequestProblem(
          400, "each of '" + key + "' needs '" + field + "', an account id as a JSON string");
    }
    return value.asText();
  }

  private static String firstLine(String message) {
    String m = String.valueOf(message);
    int end = m.indexOf('\n');
    return end < 0 ? m : m.substring(0, end);
  }

  private static ObjectNode render(State now, LiveScores.Score p, int explain, boolean fresh) {
    ObjectNode out = JSON.createObjectNode();
    out.put("node", now.snapshot().nodes().idOf(p.node()));
    out.put("state", "fresh");
    out.put("label", p.label());
    out.put("probability", p.probability());
    out.put("version", now.snapshot().version());
    out.put("model_version", now.modelVersion());
    ObjectNode probabilities = out.putObject("probabilities");
    float[] all = p.probabilities();
    for (int c = 0; c < all.length; c++) {
      probabilities.put(now.labels().get(c), all[c]);
    }
    if (explain > 0) {
      ArrayNode layers = out.putArray("explanation");
      for (LayerExplanation layer : p.explained().explanation().orElseThrow()) {
        ObjectNode entry = layers.addObject();
        entry.put("layer", layer.layerName());
        ArrayNode neighbours = entry.putArray("neighbours");
        // Precomputed lists hold the top MAX_EXPLAIN, best first; their first k are the top k.
        List<NeighbourWeight> top = layer.topNeighbours();
        for (NeighbourWeight w : top.subList(0, Math.min(explain, top.size()))) {
          ObjectNode n = neighbours.addObject();
          n.put("node", now.snapshot().nodes().idOf(w.node()));
          n.put("weight", w.weight());
        }
      }
    }
    out.put("computed", fresh ? "on-request" : "from-table");
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

  private static ThreadFactory namedThreads(String prefix) {
    AtomicInteger count = new AtomicInteger();
    return task -> {
      Thread t = new Thread(task, prefix + count.incrementAndGet());
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
