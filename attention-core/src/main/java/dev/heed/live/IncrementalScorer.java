package dev.heed.live;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.internal.model.ModelSteps;
import dev.heed.model.AttentionModel;
import dev.heed.model.Layer;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.CopyOnWriteArrayList;
import java.util.concurrent.locks.StampedLock;
import java.util.function.Consumer;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Keeps one model's scores of every node of a {@link VersionedGraph} up to date: it holds each
 * node's layer outputs, and after batches of updates {@link #refresh()} recomputes only the nodes
 * whose receptive field changed, at a cost that grows with the affected region, not with the graph.
 *
 * <pre>{@code
 * try (IncrementalScorer<String> scorer =
 *     IncrementalScorer.create(model, graph, RefreshOptions.defaults().withWorkBudget(500_000))) {
 *   scorer.onTopLabelChange(change -> alerts.send(change.node(), change.label()));
 *   graph.apply(graph.newBatch().addEdge("acct-17", "acct-42"));
 *   RefreshReport report = scorer.refresh(); // recomputes what the new edge reaches
 *   LiveScore<String> s = scorer.score("acct-42");
 *   if (s.isFresh()) { float[] p = s.probabilities(); }
 * }
 * }</pre>
 *
 * <p><b>What is recomputed.</b> The model's layers are cut into stages, one per attention layer
 * (each with the per-node layers after it; the first also with those before it), and every node's
 * output of every stage is kept. A node's stage output changes when its row changed, when its own
 * features changed (first stage), or when its own or an in-neighbour's output of the previous stage
 * changed; so the nodes to recompute are found by walking from the changed rows and features along
 * out-edges (the reverse of rows), one hop per attention stage. With {@link
 * DirectionPolicy#SYMMETRISE} the rows are their own reverse; a directed graph gets a reverse
 * adjacency, built from the snapshot at creation (O(n + E)) and kept in step with each ingested
 * batch by comparing the changed rows of the old and new snapshot. Each stage then runs its layers
 * over a small local pattern: the rows to recompute and their in-neighbours, whose stored outputs
 * of the previous stage (or features) are the input. After a refresh that leaves nothing pending,
 * every node's probabilities equal a full pass over the same snapshot up to float rounding.
 *
 * <p><b>Versions and pending work.</b> A refresh first ingests every batch applied since the last
 * one (its batches reach the scorer through the graph, in order, from the version the scorer was
 * created at), marks what they affect, and then recomputes stage by stage within the {@link
 * RefreshOptions#workBudget() work budget}. What is left stays pending; later refreshes continue it
 * before newer work of later stages. {@link #score} answers for the version the scorer has
 * ingested: a pending node is {@link ScoreState#PENDING} and carries no probabilities, so a stale
 * score is never served as fresh; so is a node added to the graph but not ingested yet. Ingesting
 * and marking is not budgeted: it costs O(Σ out-degree) over the newly affected nodes of each
 * stage. Batch results wait in a queue until the next refresh (a few dozen bytes plus their
 * changed-node lists each), so call {@link #refresh()} regularly, for example after every batch or
 * on a timer.
 *
 * <p><b>Nodes without features</b>, and nodes with such a node in their receptive field, are {@link
 * ScoreState#NOT_SCORABLE} (never a made-up score) until the features arrive.
 *
 * <p><b>Full self-attention</b> (a layer over the complete pattern) makes every node depend on
 * every node, so any update would recompute everything: {@link #create} refuses such a model and
 * says to score with {@link dev.heed.classify.NodeClassifier} over a compacted snapshot instead.
 *
 * <p><b>Subscriptions.</b> {@link #onTopLabelChange} and {@link #onThreshold} register listeners
 * for changes between a node's previous fresh score and its new one. They run on the thread that
 * calls {@link #refresh()}, after that refresh's scores are published (a listener that calls {@link
 * #score} sees them), in the order the listeners subscribed. A listener that throws is logged
 * through SLF4J at warning level and skipped; the refresh and the other listeners go on.
 *
 * <p><b>Kept projections.</b> A GAT or GATv2 layer that starts a stage computes, from each input
 * row alone, the node's projection (GAT: the projected features and each head's source and target
 * terms; GATv2: the source and target projections). The scorer keeps these per node and recomputes
 * a node's projection only when its input row changes, so recomputing a row reads its
 * in-neighbours' kept projections instead of projecting every neighbour again: without this, a
 * refresh that touches a hub's row re-projected all of the hub's in-neighbours (64 × 64
 * multiply-adds each for the benchmark model). Other attention layers (graph-masked self-attention,
 * or an attention layer after per-node layers in the first stage) project every row they read.
 *
 * <p><b>Kept softmax sums.</b> A long row (at least {@value #SUMS_MIN_DEGREE} entries) of such a
 * GAT layer with additive scores (Veličković et al. 2018) also keeps, per head, a shift m, the sum
 * S = Σ exp(e_j − m) and the weighted sum W = Σ exp(e_j − m)·v_j over its sources j, in float64, so
 * that the head's output is W / S. When the row and the target's own projection are unchanged and
 * only some sources' projections changed (a hub next to an updated node: the common case after an
 * edge insert), the refresh subtracts those sources' old terms and adds their new ones, O(changed ×
 * heads × head width) instead of O(degree × heads × head width), raising the shift when a new score
 * exceeds it. The sums are rebuilt over the whole row instead when the row or the target changed,
 * when a head's sum would shrink more than {@value KeptSums#MAX_SHRINK}× in one update
 * (cancellation), after {@value KeptSums#MAX_UPDATES} updates in place (rounding drift), and for
 * rows still pending when a new batch arrives. Rows reading a node without features, and shorter
 * rows, run over the local pattern as before. The replaced projections are kept until the stage has
 * nothing pending.
 *
 * <p><b>Memory</b> ({@link #stateBytes()}): per node, 4 bytes per output value of every stage and
 * per value of every kept projection (a 2-layer GAT of 8 heads × 8 dims over 64 features with 4
 * classes: 4·(64 + 4 + 80 + 80) = 912 bytes), 4 bytes of scratch, and 3 bits per stage plus 2; a
 * directed graph adds its reverse adjacency, about 4 to 6 bytes per entry plus 24 per node. Each
 * long row whose sums were built keeps 8·(heads·(2 + head width) + 1) bytes plus a map entry (712
 * with 8 heads of 8 dims). The snapshot the scorer reflects is held too: after a compaction, the
 * old base stays reachable until the next {@link #refresh()}, which moves to the compacted snapshot
 * even when no batch arrived.
 *
 * <p><b>Cost</b> of a refresh: for each stage, O(Σ deg) over the rows recomputed (gathering their
 * sources' kept projections, the attention, the per-node layers), plus projecting each recomputed
 * row once for the next stage; without kept projections, also projecting every row read. Creating
 * the scorer costs one full pass over the graph.
 *
 * <p>Thread safety: safe for any number of threads. Refreshes run one at a time (a second caller
 * waits). {@link #score} never blocks a refresh for long and is never blocked for long: it reads
 * optimistically and answers for one consistent version (the scorer's ingested version, which a
 * refresh publishes under a short write lock together with the pending marks and each chunk of new
 * scores).
 *
 * @param <K> the type of the caller's node ids
 */
public final class IncrementalScorer<K> implements AutoCloseable {

  private static final Logger LOG = LoggerFactory.getLogger(IncrementalScorer.class);

  /** Work units (entries plus rows) per chunk of rows recomputed together. */
  static final int CHUNK_WORK = 1 << 16;

  /** Rows per chunk, at most. */
  static final int CHUNK_ROWS = 4096;

  /**
   * Rows with at least this many entries keep their softmax sums ({@link KeptSums}; GAT layers with
   * additive scores that start a stage): 712 bytes per such row with 8 heads of 8 dims.
   */
  static final int SUMS_MIN_DEGREE = 128;

  private final AttentionModel model;
  private final VersionedGraph<K> graph;
  private final RefreshOptions options;
  private final ModelSteps steps;
  private final List<String> labels;
  private final Stage[] stages;
  private final Stage last;
  private final OutNeighbours outNeighbours; // null when rows are symmetric
  private final int sumsMinDegree;
  private final ConcurrentLinkedQueue<BatchResult> feed = new ConcurrentLinkedQueue<>();
  private final Consumer<BatchResult> follower = feed::add;
  private final Object refreshLock = new Object();
  private final StampedLock published = new StampedLock();
  private final List<LabelWatch<K>> labelWatches = new CopyOnWriteArrayList<>();
  private final List<ThresholdWatch<K>> thresholdWatches = new CopyOnWriteArrayList<>();
  private volatile boolean closed;

  // Written under the published write lock, read optimistically by score():
  private LiveSnapshot<K> reflected;

  // Refresh thread only (under refreshLock):
  private int capacity;
  private long[] scored = new long[0]; // has a published fresh score
  private long[] seen = new long[0]; // scratch marks, cleared after use
  private int[] localOf = new int[0]; // scratch global-to-local ids, -1 when unused
  private int[] rowBuffer = new int[64];
  private int[] readIds = new int[64];
  private int[] offsets = new int[65];
  private int[] columns = new int[64];
  private boolean[] missingIn = new boolean[64];
  private List<Runnable> deliveries = new ArrayList<>();

  /** One attention layer with the per-node layers around it, and every node's output of it. */
  private static final class Stage {
    final int index;
    final int from;
    final int to;
    final boolean attends;
    final int inWidth;
    final int outWidth;
    final int projectionWidth; // 0: the attention layer's projections are not kept
    float[] out = new float[0];
    float[] projections = new float[0]; // per node, the attention layer's projection of its input
    long[] need = new long[0];
    int needCount;
    long[] missing = new long[0];
    final KeptSums kept; // null: rows do not keep softmax sums
    final Map<Integer, double[]> sums = new HashMap<>();
    // Nodes whose projection changed since the stage last had nothing pending, with the projection
    // the kept sums were built from; trusted while every kept sum reflects exactly those.
    final Map<Integer, float[]> replaced = new HashMap<>();
    long[] replacedBits = new long[0];
    boolean sumsTrusted = true;

    Stage(
        int index,
        int from,
        int to,
        boolean attends,
        int inWidth,
        int outWidth,
        int projectionWidth,
        KeptSums kept) {
      this.index = index;
      this.from = from;
      this.to = to;
      this.attends = attends;
      this.inWidth = inWidth;
      this.outWidth = outWidth;
      this.projectionWidth = projectionWidth;
      this.kept = kept;
    }

    boolean keepsSums() {
      return kept != null;
    }

    /** Forgets the replaced projections: every row of the stage is up to date. */
    void settle() {
      for (int v : replaced.keySet()) {
        clear(replacedBits, v);
      }
      replaced.clear();
      sumsTrusted = true;
    }
  }

  private record LabelWatch<K>(Consumer<TopLabelChange<K>> listener) {}

  private record ThresholdWatch<K>(
      int classIndex, float threshold, Consumer<ThresholdCrossing<K>> listener) {}

  private IncrementalScorer(
      AttentionModel model, VersionedGraph<K> graph, RefreshOptions options, int sumsMinDegree) {
    this.model = model;
    this.sumsMinDegree = sumsMinDegree;
    this.graph = graph;
    this.options = options;
    this.steps = ModelSteps.get();
    this.labels = model.classLabels();
    this.stages = stagesOf(model, steps);
    this.last = stages[stages.length - 1];
    LiveSnapshot<K> start = graph.follow(follower);
    this.reflected = start;
    this.outNeighbours =
        graph.direction() == DirectionPolicy.SYMMETRISE ? null : new OutNeighbours(start);
    int n = start.nodeCount();
    grow(n);
    int[] all = new int[n];
    Arrays.setAll(all, i -> i);
    keepProjections(stages[0], start, all, n);
    for (Stage stage : stages) {
      for (int v = 0; v < n; v++) {
        set(stage.need, v);
      }
      stage.needCount = n;
    }
    process(RefreshOptions.UNLIMITED, new long[2], null);
    deliveries = new ArrayList<>();
  }

  /**
   * Creates a scorer that follows {@code graph} from its current version and scores every node
   * once. Cost: one full pass over the graph (O(n + E) plus the model's work over every node); a
   * directed graph also builds its reverse adjacency, O(n + E).
   *
   * @param model the model; its input feature count must equal the graph's
   * @param graph the live graph, open; the scorer receives its batches from now on
   * @param options path and work budget
   * @param <K> the type of the caller's node ids
   * @return the scorer, every scorable node fresh for the graph's current version
   * @throws IllegalArgumentException if the model attends over every node (full self-attention), or
   *     its feature count differs from the graph's
   * @throws IllegalStateException if the graph is closed, or the path's kernel is not on the class
   *     path
   * @throws NullPointerException if an argument is null
   */
  public static <K> IncrementalScorer<K> create(
      AttentionModel model, VersionedGraph<K> graph, RefreshOptions options) {
    return create(model, graph, options, SUMS_MIN_DEGREE);
  }

  /**
   * {@link #create(AttentionModel, VersionedGraph, RefreshOptions)} with rows of at least {@code
   * sumsMinDegree} entries keeping their softmax sums (tests use 1, so that every row does).
   */
  static <K> IncrementalScorer<K> create(
      AttentionModel model, VersionedGraph<K> graph, RefreshOptions options, int sumsMinDegree) {
    Objects.requireNonNull(model, "model");
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(options, "options");
    if (model.inputFeatureCount() != graph.featureCount()) {
      throw new IllegalArgumentException(
          "the model reads "
              + model.inputFeatureCount()
              + " features per node but the live graph holds "
              + graph.featureCount()
              + "; build the graph with VersionedGraph.builder("
              + model.inputFeatureCount()
              + ") or use the model trained for its features");
    }
    if (model.needsEveryNode()) {
      String layer =
          model.layers().stream()
              .filter(l -> l.kind().equals("self_attention"))
              .map(Layer::name)
              .filter(name -> isComplete(model, name))
              .findFirst()
              .orElse("?");
      throw new IllegalArgumentException(
          "layer '"
              + layer
              + "' attends over every node (full self-attention), so every update would change"
              + " every node's scores and incremental refresh would save nothing; score such a"
              + " model with NodeClassifier.classify over graph.snapshot().compacted() instead");
    }
    if (graph.isClosed()) {
      throw new IllegalStateException(
          "cannot create an incremental scorer: the live graph is closed");
    }
    return new IncrementalScorer<>(model, graph, options, sumsMinDegree);
  }

  private static boolean isComplete(AttentionModel model, String name) {
    ModelSteps steps = ModelSteps.get();
    for (int l = 0; l < model.layers().size(); l++) {
      if (model.layers().get(l).name().equals(name)) {
        return steps.reads(model, l) == ModelSteps.READS_EVERY_NODE;
      }
    }
    return false;
  }

  /** Cuts the layers into stages: each attention layer starts one (the first starts at 0). */
  private static Stage[] stagesOf(AttentionModel model, ModelSteps steps) {
    List<Layer> layers = model.layers();
    List<Integer> starts = new ArrayList<>();
    starts.add(0);
    boolean first = true;
    for (int l = 0; l < layers.size(); l++) {
      if (steps.reads(model, l) == ModelSteps.READS_IN_NEIGHBOURS) {
        if (!first) {
          starts.add(l);
        }
        first = false;
      }
    }
    Stage[] out = new Stage[starts.size()];
    for (int s = 0; s < out.length; s++) {
      int from = starts.get(s);
      int to = s + 1 < out.length ? starts.get(s + 1) : layers.size();
      boolean attends = false;
      for (int l = from; l < to; l++) {
        attends |= steps.reads(model, l) == ModelSteps.READS_IN_NEIGHBOURS;
      }
      boolean startsWithAttention = steps.reads(model, from) == ModelSteps.READS_IN_NEIGHBOURS;
      int projectionWidth = startsWithAttention ? steps.projectionWidth(model, from) : 0;
      float slope = projectionWidth > 0 ? steps.additiveSlope(model, from) : Float.NaN;
      out[s] =
          new Stage(
              s,
              from,
              to,
              attends,
              layers.get(from).inputWidth(),
              layers.get(to - 1).outputWidth(),
              projectionWidth,
              Float.isNaN(slope)
                  ? null
                  : new KeptSums(layers.get(from).attentionHeads(), projectionWidth, slope));
    }
    return out;
  }

  /**
   * Ingests every batch applied to the graph since the last refresh and recomputes what they
   * affect, within the work budget (see the class description). Subscribed listeners run on this
   * thread before it returns.
   *
   * @return the version now reflected, the affected, refreshed and pending node counts and the work
   *     done
   * @throws IllegalStateException if the scorer is closed, or the path's kernel is not on the class
   *     path
   */
  public RefreshReport refresh() {
    synchronized (refreshLock) {
      ensureOpen("refresh");
      LiveSnapshot<K> previous = reflected;
      LiveSnapshot<K> latest = graph.snapshot();
      List<BatchResult> batches = new ArrayList<>();
      for (BatchResult r = feed.peek(); r != null && r.version() <= latest.version(); ) {
        batches.add(feed.poll());
        r = feed.peek();
      }
      int affected = 0;
      if (!batches.isEmpty()) {
        affected = ingest(batches, latest);
      } else if (latest.version() == previous.version() && latest != previous) {
        // A compaction republished the same version: let go of the old base.
        long stamp = published.writeLock();
        try {
          reflected = latest;
        } finally {
          published.unlockWrite(stamp);
        }
      }
      long[] done = new long[2];
      IntList refreshed = new IntList();
      process(options.workBudget(), done, refreshed);
      List<Runnable> toDeliver = deliveries;
      deliveries = new ArrayList<>();
      for (Runnable delivery : toDeliver) {
        delivery.run();
      }
      return new RefreshReport(
          previous.version(),
          reflected.version(),
          batches.size(),
          affected,
          refreshed.size(),
          done[0],
          done[1],
          last.needCount,
          refreshed.toArray());
    }
  }

  /**
   * Returns one node's score as of the version the scorer has ingested. O(classes) plus an id
   * lookup; never waits for a refresh except in the short moments it publishes.
   *
   * @param id a node id of the graph
   * @return the score: fresh with probabilities, pending, or not scorable
   * @throws IllegalArgumentException if the graph has no node with that id
   * @throws IllegalStateException if the scorer is closed
   * @throws NullPointerException if {@code id} is null
   */
  public LiveScore<K> score(K id) {
    Objects.requireNonNull(id, "id");
    ensureOpen("score");
    LiveScore<K> answer = null;
    long stamp = published.tryOptimisticRead();
    if (stamp != 0) {
      try {
        answer = read(id);
      } catch (RuntimeException raced) {
        answer = null; // arrays seen mid-update; read again under the lock
      }
      if (!published.validate(stamp)) {
        answer = null;
      }
    }
    if (answer == null) {
      stamp = published.readLock();
      try {
        answer = read(id);
      } finally {
        published.unlockRead(stamp);
      }
    }
    if (answer.nodeIndex() == -2) {
      throw new IllegalArgumentException(
          "unknown node id '"
              + id
              + "': the live graph has no such node (the scorer reflects version "
              + answer.version()
              + "); add it with UpdateBatch.addNode first");
    }
    return answer;
  }

  /** Reads a score; nodeIndex -2 marks an unknown id. */
  private LiveScore<K> read(K id) {
    LiveSnapshot<K> snapshot = reflected;
    long version = snapshot.version();
    int index = snapshot.nodes().indexOf(id);
    if (index < 0) {
      boolean known = graph.snapshot().nodes().indexOf(id) >= 0;
      return new LiveScore<>(id, known ? -1 : -2, ScoreState.PENDING, null, -1, null, version);
    }
    if (get(last.need, index)) {
      return new LiveScore<>(id, index, ScoreState.PENDING, null, -1, null, version);
    }
    if (get(last.missing, index)) {
      return new LiveScore<>(id, index, ScoreState.NOT_SCORABLE, null, -1, null, version);
    }
    int c = last.outWidth;
    float[] p = Arrays.copyOfRange(last.out, index * c, index * c + c);
    int top = argMax(p, 0);
    return new LiveScore<>(id, index, ScoreState.FRESH, p, top, labels.get(top), version);
  }

  /**
   * Subscribes to changes of nodes' top labels: called for each node whose most probable class in a
   * new fresh score differs from its previous fresh score's (or that is scored for the first time).
   * See the class description for the thread and for listeners that throw.
   *
   * @param listener called with each change
   * @return the subscription; close it to unsubscribe
   * @throws IllegalStateException if the scorer is closed
   */
  public Subscription onTopLabelChange(Consumer<TopLabelChange<K>> listener) {
    Objects.requireNonNull(listener, "listener");
    ensureOpen("subscribe");
    LabelWatch<K> watch = new LabelWatch<>(listener);
    labelWatches.add(watch);
    return new Subscription(() -> labelWatches.remove(watch));
  }

  /**
   * Subscribes to one class's probability crossing a threshold, upwards (from below, or from no
   * score, to at least {@code threshold}) or downwards (from at least it to below), between a
   * node's previous fresh score and its new one. See the class description for the thread and for
   * listeners that throw.
   *
   * @param classLabel one of the model's class labels
   * @param threshold in [0, 1]
   * @param listener called with each crossing; {@link ThresholdCrossing#direction()} says which way
   * @return the subscription; close it to unsubscribe
   * @throws IllegalArgumentException if the label is not the model's or the threshold is outside
   *     [0, 1]
   * @throws IllegalStateException if the scorer is closed
   */
  public Subscription onThreshold(
      String classLabel, float threshold, Consumer<ThresholdCrossing<K>> listener) {
    Objects.requireNonNull(classLabel, "classLabel");
    Objects.requireNonNull(listener, "listener");
    int c = labels.indexOf(classLabel);
    if (c < 0) {
      throw new IllegalArgumentException(
          "unknown class label '" + classLabel + "'; the model's labels are " + labels);
    }
    if (!(threshold >= 0f && threshold <= 1f)) {
      throw new IllegalArgumentException(
          "the threshold must be a probability in [0, 1], got " + threshold);
    }
    ensureOpen("subscribe");
    ThresholdWatch<K> watch = new ThresholdWatch<>(c, threshold, listener);
    thresholdWatches.add(watch);
    return new Subscription(() -> thresholdWatches.remove(watch));
  }

  /**
   * Returns the graph version the scorer has ingested: fresh scores equal a full pass over it.
   *
   * @return the version
   */
  public long version() {
    long stamp = published.readLock();
    try {
      return reflected.version();
    } finally {
      published.unlockRead(stamp);
    }
  }

  /**
   * Returns how many nodes are pending (see {@link ScoreState#PENDING}).
   *
   * @return the count
   */
  public int pendingCount() {
    long stamp = published.readLock();
    try {
      return last.needCount;
    } finally {
      published.unlockRead(stamp);
    }
  }

  /**
   * Returns the bytes the scorer's own state holds, counted from array lengths: every stage's
   * outputs, the marks and scratch, and a directed graph's reverse adjacency (not the snapshot it
   * reflects, which the graph owns). O(1) for a symmetric graph, O(n) for a directed one.
   *
   * @return bytes
   */
  public long stateBytes() {
    synchronized (refreshLock) {
      long total =
          Layout.arrayBytes(scored.length, 8)
              + Layout.arrayBytes(seen.length, 8)
              + Layout.arrayBytes(localOf.length, 4);
      for (Stage stage : stages) {
        total +=
            Layout.arrayBytes(stage.out.length, 4)
                + Layout.arrayBytes(stage.projections.length, 4)
                + Layout.arrayBytes(stage.need.length, 8)
                + Layout.arrayBytes(stage.missing.length, 8)
                + Layout.arrayBytes(stage.replacedBits.length, 8);
        // Kept sums: each row's array plus about 48 bytes of map entry and key (common practice
        // for java.util.HashMap with compressed references).
        int sumsLength = stage.kept == null ? 0 : stage.kept.length();
        total += stage.sums.size() * (Layout.arrayBytes(sumsLength, 8) + 48L);
        total += stage.replaced.size() * (Layout.arrayBytes(stage.projectionWidth, 4) + 48L);
      }
      return total + (outNeighbours == null ? 0 : outNeighbours.bytes());
    }
  }

  /**
   * Returns the model.
   *
   * @return the model
   */
  public AttentionModel model() {
    return model;
  }

  /**
   * Returns the options.
   *
   * @return the options
   */
  public RefreshOptions options() {
    return options;
  }

  /**
   * Stops following the graph and refuses later calls ({@link IllegalStateException}); waits for a
   * refresh in progress. The graph is not closed. Idempotent.
   */
  @Override
  public void close() {
    synchronized (refreshLock) {
      closed = true;
      graph.unfollow(follower);
      feed.clear();
    }
  }

  private void ensureOpen(String what) {
    if (closed) {
      throw new IllegalStateException("cannot " + what + ": the incremental scorer is closed");
    }
  }

  // ---------------------------------------------------------------- ingesting batches

  /**
   * Brings the scorer's marks to {@code next}: keeps the reverse adjacency in step, marks the
   * affected nodes of every stage, publishes the version with the new pending marks. Returns how
   * many nodes became pending.
   */
  private int ingest(List<BatchResult> batches, LiveSnapshot<K> next) {
    LiveSnapshot<K> previous = reflected;
    int n = next.nodeCount();
    long stamp = published.writeLock();
    try {
      grow(n);
    } finally {
      published.unlockWrite(stamp);
    }
    int[] rows = unionOf(batches, true);
    int[] features = unionOf(batches, false);
    for (Stage stage : stages) {
      if (stage.keepsSums()) {
        // Rows still pending may hold sums from before projections replaced since: rebuild them.
        stage.sumsTrusted &= stage.needCount == 0;
        for (int v : rows) {
          stage.sums.remove(v);
        }
      }
    }
    keepProjections(stages[0], next, features, features.length);
    if (outNeighbours != null) {
      outNeighbours.grow(n);
      int[] before = new int[16];
      for (int v : rows) {
        int oldDegree = v < previous.nodeCount() ? previous.degree(v) : 0;
        if (before.length < oldDegree) {
          before = new int[oldDegree];
        }
        if (oldDegree > 0) {
          previous.copyRow(v, before, 0);
        }
        int newDegree = fetchRow(next, v);
        outNeighbours.replaceRow(v, before, oldDegree, rowBuffer, newDegree);
      }
    }
    int[] newly = null;
    for (int s = 0; s < stages.length; s++) {
      Stage stage = stages[s];
      IntList marks = new IntList();
      if (s == 0) {
        mark(stage, rows, rows.length, marks);
        mark(stage, features, features.length, marks);
        if (stage.attends) {
          markOut(stage, next, features, features.length, marks);
        }
      } else {
        mark(stage, newly, newly.length, marks);
        if (stage.attends) {
          mark(stage, rows, rows.length, marks);
          markOut(stage, next, newly, newly.length, marks);
        }
      }
      newly = marks.toArray();
      for (int v : newly) {
        clear(seen, v);
      }
      if (stage != last) {
        for (int v : newly) {
          set(stage.need, v);
        }
        stage.needCount += newly.length;
      }
    }
    stamp = published.writeLock();
    try {
      for (int v : newly) {
        set(last.need, v);
      }
      last.needCount += newly.length;
      reflected = next;
    } finally {
      published.unlockWrite(stamp);
    }
    return newly.length;
  }

  /** The sorted union of the batches' changed rows (or features). */
  private static int[] unionOf(List<BatchResult> batches, boolean rows) {
    if (batches.size() == 1) {
      BatchResult only = batches.get(0);
      return rows ? only.sharedChangedRows() : only.sharedChangedFeatures();
    }
    IntList all = new IntList();
    for (BatchResult b : batches) {
      int[] part = rows ? b.sharedChangedRows() : b.sharedChangedFeatures();
      for (int v : part) {
        all.add(v);
      }
    }
    int[] sorted = all.toArray();
    Arrays.sort(sorted);
    int w = 0;
    for (int k = 0; k < sorted.length; k++) {
      if (k == 0 || sorted[k] != sorted[k - 1]) {
        sorted[w++] = sorted[k];
      }
    }
    return Arrays.copyOf(sorted, w);
  }

  /** Adds the nodes not yet marked for {@code stage} (nor in this round) to {@code marks}. */
  private void mark(Stage stage, int[] nodes, int count, IntList marks) {
    for (int k = 0; k < count; k++) {
      int v = nodes[k];
      if (!get(stage.need, v) && !get(seen, v)) {
        set(seen, v);
        marks.add(v);
      }
    }
  }

  /** Marks the nodes that the given nodes feed (their out-neighbours in {@code next}). */
  private void markOut(Stage stage, LiveSnapshot<K> next, int[] nodes, int count, IntList marks) {
    for (int k = 0; k < count; k++) {
      int u = nodes[k];
      if (outNeighbours == null) {
        int d = fetchRow(next, u);
        mark(stage, rowBuffer, d, marks);
      } else {
        mark(stage, outNeighbours.targets(u), outNeighbours.count(u), marks);
      }
    }
  }

  /** Copies a row of {@code snapshot} into {@link #rowBuffer}; returns its degree. */
  private int fetchRow(LiveSnapshot<K> snapshot, int v) {
    return fetchRow(snapshot, v, snapshot.degree(v));
  }

  private int fetchRow(LiveSnapshot<K> snapshot, int v, int d) {
    if (rowBuffer.length < d) {
      rowBuffer = new int[Math.max(d, rowBuffer.length * 2)];
    }
    snapshot.copyRow(v, rowBuffer, 0);
    return d;
  }

  /** Grows every per-node array to hold {@code n} nodes (call under the write lock). */
  private void grow(int n) {
    if (n <= capacity && capacity > 0) {
      return;
    }
    int next = Math.max(n, Math.max(16, capacity + (capacity >> 1)));
    int words = (next + 63) >>> 6;
    for (Stage stage : stages) {
      stage.out = Arrays.copyOf(stage.out, Math.multiplyExact(next, stage.outWidth));
      stage.projections =
          Arrays.copyOf(stage.projections, Math.multiplyExact(next, stage.projectionWidth));
      stage.need = Arrays.copyOf(stage.need, words);
      stage.missing = Arrays.copyOf(stage.missing, words);
      stage.replacedBits = Arrays.copyOf(stage.replacedBits, words);
    }
    scored = Arrays.copyOf(scored, words);
    seen = Arrays.copyOf(seen, words);
    int old = localOf.length;
    localOf = Arrays.copyOf(localOf, next);
    Arrays.fill(localOf, old, next, -1);
    capacity = next;
  }

  // ---------------------------------------------------------------- recomputing

  /**
   * Recomputes pending rows stage by stage within {@code budget}. {@code done}: rows [0] and work
   * [1] are added to; {@code refreshed} (when not null) gets the nodes given new final scores, in
   * increasing order (one pass over the last stage's marks).
   */
  private void process(long budget, long[] done, IntList refreshed) {
    long remaining = budget;
    boolean progressed = false;
    LiveSnapshot<K> snapshot = reflected;
    int n = snapshot.nodeCount();
    int[] targets = new int[CHUNK_ROWS];
    for (Stage stage : stages) {
      int cursor = 0;
      while (stage.needCount > 0) {
        if (remaining <= 0 && progressed) {
          return;
        }
        if (stage.needCount == n && budget == RefreshOptions.UNLIMITED && n > CHUNK_ROWS) {
          long work = runWhole(stage, snapshot);
          done[0] += n;
          done[1] += work;
          if (stage == last && refreshed != null) {
            for (int v = 0; v < n; v++) {
              refreshed.add(v);
            }
          }
          progressed = true;
          continue;
        }
        long limit = Math.min(remaining, CHUNK_WORK);
        int k = 0;
        long work = 0;
        for (int v = nextSet(stage.need, cursor, n);
            v >= 0 && k < CHUNK_ROWS && (k == 0 || work < limit);
            v = nextSet(stage.need, v + 1, n)) {
          targets[k++] = v;
          work += (stage.attends ? snapshot.degree(v) : 0) + 1;
          cursor = v + 1;
        }
        work = runChunk(stage, snapshot, targets, k);
        done[0] += k;
        done[1] += work;
        remaining -= work;
        if (stage == last && refreshed != null) {
          for (int i = 0; i < k; i++) {
            refreshed.add(targets[i]);
          }
        }
        progressed = true;
      }
      stage.settle();
    }
  }

  /**
   * Recomputes one stage for {@code k} nodes ({@code targets} is not modified): rows with kept
   * softmax sums from those, the others over their local pattern. Returns the work done.
   */
  private long runChunk(Stage stage, LiveSnapshot<K> snapshot, int[] targets, int k) {
    long work = 0;
    if (stage.keepsSums()) {
      int[] rest = new int[k];
      int[] counts = new int[1];
      work = runWithSums(stage, snapshot, targets, k, rest, counts);
      if (counts[0] == 0) {
        return work;
      }
      targets = rest;
      k = counts[0];
    }
    for (int i = 0; i < k; i++) {
      work += (stage.attends ? snapshot.degree(targets[i]) : 0) + 1;
    }
    runOverPattern(stage, snapshot, targets, k);
    return work;
  }

  /**
   * Recomputes the targets whose rows keep softmax sums (at least {@link #sumsMinDegree} entries,
   * every input present) from those sums, and copies the other targets to {@code rest} ({@code
   * counts[0]} of them). Kept per row and head: a shift m (at least the largest score when the sums
   * were built), S = Σ exp(e_j − m) and W = Σ exp(e_j − m)·v_j over the row's sources j, in
   * float64, so the head's output is W / S. When only some sources' projections changed since (the
   * row and its own projection did not), their old terms are subtracted and new ones added,
   * O(changed × heads × headWidth); otherwise, or when a subtraction would cancel too many bits,
   * the sums are rebuilt over the whole row. Returns the work: rows plus sources read (the changed
   * ones when updated in place).
   */
  private long runWithSums(
      Stage stage, LiveSnapshot<K> snapshot, int[] targets, int k, int[] rest, int[] counts) {
    KeptSums kept = stage.kept;
    int hd = kept.heads * kept.headWidth;
    int[] done = new int[k];
    float[] attended = null;
    int rows = 0;
    int others = 0;
    long work = 0;
    Stage before = stage.index == 0 ? null : stages[stage.index - 1];
    boolean featuresMissing = before == null && snapshot.missingFeatureCount() > 0;
    for (int i = 0; i < k; i++) {
      int t = targets[i];
      int d = snapshot.degree(t);
      // Short rows, and rows reading a node without features, go over the local pattern.
      boolean overPattern =
          d < sumsMinDegree || (before == null ? !snapshot.hasFeatures(t) : get(before.missing, t));
      int changed = 0;
      if (!overPattern) {
        fetchRow(snapshot, t, d);
        for (int j = 0; j < d && !overPattern; j++) {
          int u = rowBuffer[j];
          overPattern =
              before == null ? featuresMissing && !snapshot.hasFeatures(u) : get(before.missing, u);
          changed += get(stage.replacedBits, u) ? 1 : 0;
        }
      }
      if (overPattern) {
        stage.sums.remove(t);
        rest[others++] = t;
        continue;
      }
      double[] sums = stage.sumsTrusted ? stage.sums.get(t) : null;
      float[] table = stage.projections;
      if (sums == null
          || !kept.update(table, t, rowBuffer, d, stage.replacedBits, stage.replaced, sums)) {
        sums = kept.build(table, t, rowBuffer, d);
        stage.sums.put(t, sums);
        work += d;
      } else {
        work += changed;
      }
      if (attended == null) {
        attended = new float[k * hd];
      }
      kept.output(sums, attended, rows * hd);
      done[rows++] = t;
      work++;
    }
    counts[0] = others;
    if (rows > 0) {
      float[] result =
          steps.finishProjected(
              model,
              stage.from,
              stage.to,
              attended,
              inputs(stage, snapshot, done, rows),
              rows,
              options.path());
      commit(stage, snapshot, done, rows, result, new boolean[rows]);
    }
    return work;
  }

  /** Recomputes one stage for {@code k} nodes over their local pattern. */
  private void runOverPattern(Stage stage, LiveSnapshot<K> snapshot, int[] targets, int k) {
    int rowsIn = k;
    ensureReads(k);
    CsrGraph pattern = null;
    if (stage.attends) {
      for (int i = 0; i < k; i++) {
        localOf[targets[i]] = i;
        readIds[i] = targets[i];
      }
      offsets[0] = 0;
      for (int i = 0; i < k; i++) {
        int d = fetchRow(snapshot, targets[i]);
        int base = offsets[i];
        if (columns.length < base + d) {
          columns = Arrays.copyOf(columns, Math.max(base + d, columns.length * 2));
        }
        ensureReads(rowsIn + d);
        // Ids numbered in this row are increasing and above all earlier ones, so only the earlier
        // ids (moved to the front of the row buffer, behind the read position) need sorting.
        int threshold = rowsIn;
        int older = 0;
        int fresh = 0;
        for (int j = 0; j < d; j++) {
          int u = rowBuffer[j];
          int local = localOf[u];
          if (local < 0) {
            local = rowsIn;
            localOf[u] = local;
            readIds[rowsIn++] = u;
          }
          if (local < threshold) {
            rowBuffer[older++] = local;
          } else {
            columns[base + fresh++] = local;
          }
        }
        if (older > 0) {
          Arrays.sort(rowBuffer, 0, older);
          System.arraycopy(columns, base, columns, base + older, fresh);
          System.arraycopy(rowBuffer, 0, columns, base, older);
        }
        offsets[i + 1] = base + d;
      }
      int entries = offsets[k];
      int[] patternOffsets = new int[rowsIn + 1];
      System.arraycopy(offsets, 0, patternOffsets, 0, k + 1);
      Arrays.fill(patternOffsets, k + 1, rowsIn + 1, entries);
      pattern = CsrGraph.of(patternOffsets, Arrays.copyOf(columns, entries));
    } else {
      System.arraycopy(targets, 0, readIds, 0, k);
    }
    markMissingInputs(stage, snapshot, readIds, rowsIn);
    boolean[] missingOut = new boolean[k];
    for (int i = 0; i < k; i++) {
      boolean missing = missingIn[i];
      if (stage.attends) {
        for (int e = offsets[i]; e < offsets[i + 1] && !missing; e++) {
          missing = missingIn[columns[e]];
        }
      }
      missingOut[i] = missing;
    }
    for (int r = 0; r < rowsIn; r++) {
      localOf[readIds[r]] = -1;
    }
    float[] result;
    if (stage.projectionWidth > 0) {
      float[] targetInput = inputs(stage, snapshot, readIds, k);
      result =
          steps.runProjected(
              model,
              stage.from,
              stage.to,
              pattern,
              rowsIn,
              k,
              stage.projections,
              readIds,
              targetInput,
              options.path());
    } else {
      float[] input = inputs(stage, snapshot, readIds, rowsIn);
      result = steps.run(model, stage.from, stage.to, pattern, rowsIn, k, input, options.path());
    }
    commit(stage, snapshot, targets, k, result, missingOut);
  }

  /** Recomputes one stage for every node, over the snapshot's whole graph. Returns the work. */
  private long runWhole(Stage stage, LiveSnapshot<K> snapshot) {
    for (int s = stage.index; s < stages.length; s++) {
      stages[s].sums.clear(); // rebuilt when next needed; nothing to record for them meanwhile
    }
    int n = snapshot.nodeCount();
    int[] all = new int[n];
    Arrays.setAll(all, i -> i);
    ensureReads(n);
    markMissingInputs(stage, snapshot, all, n);
    float[] input = inputs(stage, snapshot, all, n);
    boolean[] missingOut = Arrays.copyOf(missingIn, n);
    CsrGraph pattern = null;
    long work = n;
    if (stage.attends) {
      pattern = Compaction.graphOf(snapshot);
      work += pattern.entryCount();
      int[] cols = pattern.columns();
      for (int v = 0; v < n; v++) {
        for (int e = pattern.rowStart(v); e < pattern.rowEnd(v) && !missingOut[v]; e++) {
          missingOut[v] = missingIn[cols[e]];
        }
      }
    }
    float[] result = steps.run(model, stage.from, stage.to, pattern, n, n, input, options.path());
    commit(stage, snapshot, all, n, result, missingOut);
    readIds = new int[64]; // whole-graph scratch is not kept
    missingIn = new boolean[64];
    return work;
  }

  /** Sets {@link #missingIn} for the given nodes: whether each one's stage input is missing. */
  private void markMissingInputs(Stage stage, LiveSnapshot<K> snapshot, int[] ids, int rows) {
    Stage before = stage.index == 0 ? null : stages[stage.index - 1];
    for (int r = 0; r < rows; r++) {
      missingIn[r] = before == null ? !snapshot.hasFeatures(ids[r]) : get(before.missing, ids[r]);
    }
  }

  /** The stage's input rows for the given nodes (zeros for a node without features). */
  private float[] inputs(Stage stage, LiveSnapshot<K> snapshot, int[] ids, int rows) {
    int w = stage.inWidth;
    float[] x = new float[Math.multiplyExact(rows, w)];
    Stage before = stage.index == 0 ? null : stages[stage.index - 1];
    for (int r = 0; r < rows; r++) {
      int v = ids[r];
      if (before != null) {
        System.arraycopy(before.out, v * w, x, r * w, w);
      } else if (snapshot.hasFeatures(v)) {
        snapshot.copyRow(v, x, r * w);
      }
    }
    return x;
  }

  /**
   * Recomputes the kept projections of {@code stage}'s attention layer for the given nodes, from
   * their current stage inputs, in blocks of {@link #CHUNK_WORK} rows.
   */
  private void keepProjections(Stage stage, LiveSnapshot<K> snapshot, int[] nodes, int count) {
    int w = stage.projectionWidth;
    if (w == 0) {
      return;
    }
    for (int start = 0; start < count; start += CHUNK_WORK) {
      int rows = Math.min(CHUNK_WORK, count - start);
      int[] block = Arrays.copyOfRange(nodes, start, start + rows);
      float[] projected =
          steps.project(model, stage.from, inputs(stage, snapshot, block, rows), rows);
      if (!stage.sums.isEmpty()) {
        for (int r = 0; r < rows; r++) {
          int v = block[r];
          stage.sums.remove(v); // its own target term changes
          if (!get(stage.replacedBits, v)) {
            set(stage.replacedBits, v);
            stage.replaced.put(v, Arrays.copyOfRange(stage.projections, v * w, v * w + w));
          }
        }
      }
      for (int r = 0; r < rows; r++) {
        System.arraycopy(projected, r * w, stage.projections, block[r] * w, w);
      }
    }
  }

  /** Stores a stage's new rows and clears their marks; the last stage publishes under the lock. */
  private void commit(
      Stage stage,
      LiveSnapshot<K> snapshot,
      int[] targets,
      int k,
      float[] result,
      boolean[] missingOut) {
    if (stage != last) {
      store(stage, targets, k, result, missingOut);
      keepProjections(stages[stage.index + 1], snapshot, targets, k);
      return;
    }
    if (!labelWatches.isEmpty() || !thresholdWatches.isEmpty()) {
      collectEvents(snapshot, targets, k, result, missingOut);
    }
    long stamp = published.writeLock();
    try {
      store(stage, targets, k, result, missingOut);
    } finally {
      published.unlockWrite(stamp);
    }
    for (int i = 0; i < k; i++) {
      put(scored, targets[i], !missingOut[i]);
    }
  }

  private static void store(
      Stage stage, int[] targets, int k, float[] result, boolean[] missingOut) {
    int w = stage.outWidth;
    for (int i = 0; i < k; i++) {
      int v = targets[i];
      System.arraycopy(result, i * w, stage.out, v * w, w);
      put(stage.missing, v, missingOut[i]);
      clear(stage.need, v);
    }
    stage.needCount -= k;
  }

  /** Compares each node's previous fresh score with its new one and queues the listeners' calls. */
  private void collectEvents(
      LiveSnapshot<K> snapshot, int[] targets, int k, float[] result, boolean[] missingOut) {
    int c = last.outWidth;
    long version = snapshot.version();
    for (int i = 0; i < k; i++) {
      if (missingOut[i]) {
        continue;
      }
      int v = targets[i];
      boolean had = get(scored, v);
      int newTop = argMax(result, i * c);
      int oldTop = had ? argMax(last.out, v * c) : -1;
      K id = null;
      if (newTop != oldTop && !labelWatches.isEmpty()) {
        id = snapshot.nodes().idOf(v);
        TopLabelChange<K> change =
            new TopLabelChange<>(
                id, v, had ? labels.get(oldTop) : null, labels.get(newTop), version);
        for (LabelWatch<K> watch : labelWatches) {
          deliveries.add(() -> deliver(watch.listener(), change));
        }
      }
      for (ThresholdWatch<K> watch : thresholdWatches) {
        float now = result[i * c + watch.classIndex()];
        float before = had ? last.out[v * c + watch.classIndex()] : Float.NaN;
        boolean above = now >= watch.threshold();
        boolean wasAbove = had && before >= watch.threshold();
        if (above != wasAbove) {
          if (id == null) {
            id = snapshot.nodes().idOf(v);
          }
          ThresholdCrossing<K> crossing =
              new ThresholdCrossing<>(
                  id, v, labels.get(watch.classIndex()), watch.threshold(), before, now, version);
          deliveries.add(() -> deliver(watch.listener(), crossing));
        }
      }
    }
  }

  private static <E> void deliver(Consumer<E> listener, E event) {
    try {
      listener.accept(event);
    } catch (RuntimeException e) {
      LOG.warn("a score listener threw on {}; the refresh goes on", event, e);
    }
  }

  private void ensureReads(int rows) {
    if (readIds.length < rows) {
      int size = Math.max(rows, readIds.length * 2);
      readIds = Arrays.copyOf(readIds, size);
      missingIn = Arrays.copyOf(missingIn, size);
    }
    if (offsets.length < rows + 1) {
      offsets = Arrays.copyOf(offsets, Math.max(rows + 1, offsets.length * 2));
    }
  }

  /** The most probable class in {@code p[offset..offset+classes)}; the lowest index on ties. */
  private int argMax(float[] p, int offset) {
    int best = 0;
    for (int c = 1; c < labels.size(); c++) {
      if (p[offset + c] > p[offset + best]) {
        best = c;
      }
    }
    return best;
  }

  // ---------------------------------------------------------------- bits

  private static boolean get(long[] bits, int v) {
    int word = v >>> 6;
    return word < bits.length && (bits[word] & (1L << v)) != 0;
  }

  private static void set(long[] bits, int v) {
    bits[v >>> 6] |= 1L << v;
  }

  private static void clear(long[] bits, int v) {
    bits[v >>> 6] &= ~(1L << v);
  }

  private static void put(long[] bits, int v, boolean value) {
    if (value) {
      set(bits, v);
    } else {
      clear(bits, v);
    }
  }

  /** The first set bit at or after {@code from} and below {@code n}, or -1. */
  private static int nextSet(long[] bits, int from, int n) {
    if (from >= n) {
      return -1;
    }
    int word = from >>> 6;
    long w = bits[word] & (-1L << from);
    while (true) {
      if (w != 0) {
        int v = (word << 6) + Long.numberOfTrailingZeros(w);
        return v < n ? v : -1;
      }
      if (++word >= bits.length || (word << 6) >= n) {
        return -1;
      }
      w = bits[word];
    }
  }

  /** A growable list of ints. */
  private static final class IntList {
    private int[] values = new int[16];
    private int size;

    void add(int v) {
      if (size == values.length) {
        values = Arrays.copyOf(values, size * 2);
      }
      values[size++] = v;
    }

    int size() {
      return size;
    }

    int[] toArray() {
      return Arrays.copyOf(values, size);
    }
  }
}
