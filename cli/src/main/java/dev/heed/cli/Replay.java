package dev.heed.cli;

import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.NodeIndex;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.live.BatchResult;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RejectedUpdateException;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import java.io.IOException;
import java.io.PrintWriter;
import java.lang.management.ManagementFactory;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashSet;
import java.util.List;
import java.util.Locale;
import java.util.Set;

/**
 * The replay loop of {@code heed replay}: loads the starting graph into a {@link VersionedGraph},
 * scores every node once, then applies the stream batch by batch, asks {@link AffectedScores} (an
 * incremental scorer refreshed after each batch) for the fresh scores of the nodes each batch
 * affected, and writes those that changed enough.
 *
 * <p>A node's score is written when its top label differs from the one last written for it (or held
 * at the start), or when some class probability moved by at least {@code minChange} since then;
 * nodes the stream adds are always written once scored. So slow drift is reported once it adds up,
 * and every written score is exact for its version.
 */
final class Replay {

  /** How events are grouped into batches. */
  record Batching(double windowSeconds, int events) {
    static Batching window(double seconds) {
      return new Batching(seconds, 0);
    }

    static Batching count(int events) {
      return new Batching(0, events);
    }

    String describe() {
      return events > 0
          ? events + " events per batch"
          : "windows of " + StreamFile.decimal(windowSeconds) + " s";
    }
  }

  /** Told about each batch after it is scored (for the demo's account of the ring). */
  interface BatchListener {
    /** The scores of every node of the starting graph, before the first batch. */
    void started(Classification start);

    /** One batch applied and scored; {@code scores} is empty when it affected no node. */
    void batchDone(
        int batch,
        double time,
        LiveSnapshot<String> snapshot,
        int[] affected,
        List<NodeScore> scores);
  }

  /**
   * The figures of a finished replay; {@code affectedCounts} and {@code refreshedCounts} are the
   * incremental scorer's per batch (every node when {@code incremental} is false: a model with full
   * self-attention, scored whole on every snapshot).
   */
  record Summary(
      int batches,
      int events,
      long[] batchNanos,
      long[] scoreNanos,
      long[] cpuNanos,
      int[] affectedCounts,
      int[] refreshedCounts,
      boolean incremental,
      long changesWritten,
      long labelChanges,
      List<String> transitions,
      LiveSnapshot<String> last) {}

  private final AttentionModel model;
  private final ClassifyOptions options;
  private final NodeIndex<String> startNodes;
  private final CsrGraph startGraph;
  private final NodeFeatures startFeatures;
  private final GraphPolicies policies;

  Replay(
      AttentionModel model,
      ClassifyOptions options,
      NodeIndex<String> nodes,
      CsrGraph graph,
      NodeFeatures features,
      GraphPolicies policies) {
    this.model = model;
    this.options = options;
    this.startNodes = nodes;
    this.startGraph = graph;
    this.startFeatures = features;
    this.policies = policies;
  }

  /**
   * Builds a live graph holding exactly {@code graph} (same node order, same rows) under {@code
   * policies}: every node with its features, then each edge once (one direction of a symmetrised
   * tie; self-loops only when the policy does not add them).
   */
  static VersionedGraph<String> load(
      NodeIndex<String> nodes, CsrGraph graph, NodeFeatures features, GraphPolicies policies) {
    VersionedGraph<String> live =
        VersionedGraph.builder(features.featureCount())
            .direction(policies.direction())
            .selfLoops(policies.selfLoops())
            .duplicates(policies.duplicates())
            .build();
    UpdateBatch<String> batch = live.newBatch();
    float[] row = new float[features.featureCount()];
    for (int i = 0; i < graph.nodeCount(); i++) {
      features.copyRow(i, row, 0);
      batch.addNode(nodes.idOf(i), row);
    }
    boolean symmetric = policies.direction() == DirectionPolicy.SYMMETRISE;
    boolean policyLoops = policies.selfLoops() == SelfLoopPolicy.ADD;
    int[] sources = new int[16];
    for (int i = 0; i < graph.nodeCount(); i++) {
      int d = graph.degree(i);
      if (sources.length < d) {
        sources = new int[Math.max(d, sources.length * 2)];
      }
      graph.copyRow(i, sources, 0);
      for (int k = 0; k < d; k++) {
        int j = sources[k];
        if ((j == i && policyLoops) || (symmetric && j > i)) {
          continue;
        }
        batch.addEdge(nodes.idOf(j), nodes.idOf(i));
      }
    }
    live.apply(batch);
    LiveSnapshot<String> loaded = live.compact();
    if (loaded.nodeCount() != graph.nodeCount() || loaded.edgeCount() != graph.entryCount()) {
      throw new IllegalStateException(
          "the live graph holds "
              + loaded.nodeCount()
              + " nodes and "
              + loaded.edgeCount()
              + " entries, the graph read "
              + graph.nodeCount()
              + " and "
              + graph.entryCount());
    }
    return live;
  }

  /**
   * Replays the events.
   *
   * @param streamFile the stream's file, for messages
   * @param events the events, in time order
   * @param batching how to group them
   * @param minChange the probability change that makes a score worth writing
   * @param writer where the changes go
   * @param progress the progress display
   * @param listener told about each batch, or null
   * @return the figures
   */
  Summary run(
      Path streamFile,
      List<StreamFile.Event> events,
      Batching batching,
      double minChange,
      ScoreChangeWriter writer,
      ProgressDisplay progress,
      BatchListener listener)
      throws IOException {
    checkIds(streamFile, events);
    List<String> labels = model.classLabels();
    int classes = labels.size();
    Classification start = NodeClassifier.of(model, options).classify(startGraph, startFeatures);
    int n0 = startGraph.nodeCount();
    int[] reportedLabel = new int[Math.max(16, n0)];
    Arrays.fill(reportedLabel, n0, reportedLabel.length, -1);
    float[] reported = new float[reportedLabel.length * classes];
    for (NodePrediction p : start.predictions()) {
      reportedLabel[p.node()] = p.labelIndex();
      System.arraycopy(p.probabilities(), 0, reported, p.node() * classes, classes);
    }
    if (listener != null) {
      listener.started(start);
    }
    writer.begin(labels);
    List<int[]> ranges = batches(events, batching);
    long[] batchNanos = new long[ranges.size()];
    long[] scoreNanos = new long[ranges.size()];
    long[] cpuNanos = new long[ranges.size()];
    int[] affectedCounts = new int[ranges.size()];
    int[] refreshedCounts = new int[ranges.size()];
    long written = 0;
    long labelChanges = 0;
    java.util.Map<String, Integer> transitions = new java.util.TreeMap<>();
    try (VersionedGraph<String> live = load(startNodes, startGraph, startFeatures, policies);
        ProgressDisplay.Bar bar = progress.steps("replay", ranges.size(), " batches");
        AffectedScores scorer = new AffectedScores(model, options, live)) {
      UpdateBatch<String> batch = live.newBatch();
      for (int b = 0; b < ranges.size(); b++) {
        int from = ranges.get(b)[0];
        int to = ranges.get(b)[1];
        batch.clear();
        for (int e = from; e < to; e++) {
          record(batch, events.get(e));
        }
        long cpuBegan = processCpuNanos();
        long began = System.nanoTime();
        BatchResult result;
        try {
          result = live.apply(batch);
        } catch (RejectedUpdateException rejected) {
          StreamFile.Event at = events.get(from + rejected.operation());
          String why = rejected.getMessage();
          int cut = why.indexOf("): ");
          throw StreamFile.error(
              streamFile,
              at.line(),
              at.describe()
                  + ": "
                  + (cut >= 0 ? why.substring(cut + 3) : why)
                  + " (batch "
                  + (b + 1)
                  + " refused; the batches before it were applied and their changes written)");
        }
        long applied = System.nanoTime();
        LiveSnapshot<String> snapshot = live.snapshot();
        AffectedScores.Refreshed fresh = scorer.refresh(snapshot);
        long scored = System.nanoTime();
        batchNanos[b] = scored - began;
        scoreNanos[b] = scored - applied;
        cpuNanos[b] = processCpuNanos() - cpuBegan;
        affectedCounts[b] = fresh.refreshAffected();
        refreshedCounts[b] = fresh.refreshed();
        double time = events.get(to - 1).time();
        int n = snapshot.nodeCount();
        if (n > reportedLabel.length) {
          int grown = Math.max(n, reportedLabel.length + (reportedLabel.length >> 1));
          int old = reportedLabel.length;
          reportedLabel = Arrays.copyOf(reportedLabel, grown);
          Arrays.fill(reportedLabel, old, grown, -1);
          reported = Arrays.copyOf(reported, grown * classes);
        }
        for (NodeScore p : fresh.scores()) {
          int node = p.node();
          int before = reportedLabel[node];
          float[] now = p.probabilities();
          boolean labelChanged = before != p.labelIndex();
          if (!labelChanged && !movedBy(reported, node * classes, now, minChange)) {
            continue;
          }
          writer.write(
              new ScoreChangeWriter.Change(
                  b + 1,
                  result.version(),
                  time,
                  snapshot.nodes().idOf(node),
                  before < 0 ? null : labels.get(before),
                  p));
          written++;
          if (labelChanged) {
            labelChanges++;
            transitions.merge(
                (before < 0 ? "(new)" : labels.get(before)) + " -> " + p.label(), 1, Integer::sum);
          }
          reportedLabel[node] = p.labelIndex();
          System.arraycopy(now, 0, reported, node * classes, classes);
        }
        if (listener != null) {
          listener.batchDone(b + 1, time, snapshot, fresh.affected(), fresh.scores());
        }
        bar.stepTo(b + 1);
      }
      List<String> lines = new ArrayList<>();
      transitions.forEach((k, v) -> lines.add(String.format(Locale.ROOT, "%s: %,d", k, v)));
      return new Summary(
          ranges.size(),
          events.size(),
          batchNanos,
          scoreNanos,
          cpuNanos,
          affectedCounts,
          refreshedCounts,
          scorer.incremental(),
          written,
          labelChanges,
          lines,
          live.snapshot());
    }
  }

  /** CPU time of the whole process (all threads), or -1 where the JVM does not say. */
  private static long processCpuNanos() {
    if (ManagementFactory.getOperatingSystemMXBean()
        instanceof com.sun.management.OperatingSystemMXBean os) {
      return os.getProcessCpuTime();
    }
    return -1;
  }

  private static boolean movedBy(float[] reported, int offset, float[] now, double minChange) {
    for (int c = 0; c < now.length; c++) {
      if (Math.abs(now[c] - reported[offset + c]) >= minChange) {
        return true;
      }
    }
    return false;
  }

  private static void record(UpdateBatch<String> batch, StreamFile.Event e) {
    switch (e.kind()) {
      case ADD_EDGE -> batch.addEdge(e.source(), e.target());
      case REMOVE_EDGE -> batch.removeEdge(e.source(), e.target());
      case ADD_NODE -> batch.addNode(e.source(), e.features());
      case SET_FEATURES -> batch.setFeatures(e.source(), e.features());
    }
  }

  /**
   * Checks, before anything is applied, that every id an event names is a node of the starting
   * graph or added by an earlier event, and that no node is added twice.
   */
  private void checkIds(Path file, List<StreamFile.Event> events) {
    Set<String> added = new HashSet<>();
    for (StreamFile.Event e : events) {
      boolean known = startNodes.indexOf(e.source()) >= 0 || added.contains(e.source());
      if (e.kind() == StreamFile.Kind.ADD_NODE) {
        if (known) {
          throw StreamFile.error(
              file,
              e.line(),
              e.describe()
                  + ": node '"
                  + e.source()
                  + "' already exists"
                  + (added.contains(e.source()) ? " (added earlier in the stream)" : "")
                  + "; use set-features to change its features");
        }
        added.add(e.source());
        continue;
      }
      if (!known) {
        throw unknown(file, e, e.source());
      }
      if (e.kind().isEdge() && startNodes.indexOf(e.target()) < 0 && !added.contains(e.target())) {
        throw unknown(file, e, e.target());
      }
    }
  }

  private static CliException unknown(Path file, StreamFile.Event e, String id) {
    return StreamFile.error(
        file,
        e.line(),
        e.describe()
            + ": unknown node '"
            + id
            + "': it is not in the starting graph and no earlier add-node line adds it (ids"
            + " are matched exactly, as written in the edge list)");
  }

  /** Splits the events into [from, to) ranges: by count, or by time window (empty ones skipped). */
  static List<int[]> batches(List<StreamFile.Event> events, Batching batching) {
    List<int[]> ranges = new ArrayList<>();
    int from = 0;
    while (from < events.size()) {
      int to = from + 1;
      if (batching.events() > 0) {
        to = Math.min(events.size(), from + batching.events());
      } else {
        double window = Math.floor(events.get(from).time() / batching.windowSeconds());
        while (to < events.size()
            && Math.floor(events.get(to).time() / batching.windowSeconds()) == window) {
          to++;
        }
      }
      ranges.add(new int[] {from, to});
      from = to;
    }
    return ranges;
  }

  /** Prints the summary lines every replay prints. */
  static void printSummary(Summary s, String streamName, Batching batching, PrintWriter err) {
    long[] sorted = s.batchNanos().clone();
    Arrays.sort(sorted);
    long[] scoring = s.scoreNanos().clone();
    Arrays.sort(scoring);
    long[] cpu = s.cpuNanos().clone();
    Arrays.sort(cpu);
    int[] affected = s.affectedCounts().clone();
    Arrays.sort(affected);
    int[] refreshed = s.refreshedCounts().clone();
    Arrays.sort(refreshed);
    err.printf(
        Locale.ROOT,
        "heed replay: %,d events of %s in %,d batches (%s); now version %d: %,d nodes, %,d"
            + " edges (attention entries)%n",
        s.events(),
        streamName,
        s.batches(),
        batching.describe(),
        s.last().version(),
        s.last().nodeCount(),
        s.last().edgeCount());
    if (s.batches() > 0) {
      err.printf(
          Locale.ROOT,
          "  per batch (apply + score the affected nodes): median %.2f ms, p99 %.2f ms, max %.2f"
              + " ms; scoring alone median %.2f ms; process CPU median %.2f ms%n",
          percentile(sorted, 0.5) / 1e6,
          percentile(sorted, 0.99) / 1e6,
          sorted[sorted.length - 1] / 1e6,
          percentile(scoring, 0.5) / 1e6,
          percentile(cpu, 0.5) / 1e6);
      err.printf(
          Locale.ROOT,
          "  affected nodes per batch: median %,d, max %,d; refreshed: median %,d, max %,d%n",
          affected[affected.length / 2],
          affected[affected.length - 1],
          refreshed[refreshed.length / 2],
          refreshed[refreshed.length - 1]);
    }
    err.println(
        s.incremental()
            ? "  scoring: incremental (every node's layer outputs kept, refreshed after each batch)"
            : "  scoring: every node on every snapshot, by receptive field (the model has full"
                + " self-attention, which incremental refresh refuses: every update changes every"
                + " score)");
    err.printf(
        Locale.ROOT,
        "  score changes written: %,d, of which %,d changed the top label%s%n",
        s.changesWritten(),
        s.labelChanges(),
        s.transitions().isEmpty() ? "" : " (" + String.join("; ", s.transitions()) + ")");
    err.flush();
  }

  /** The nearest-rank percentile of sorted values. */
  static long percentile(long[] sorted, double q) {
    int rank = (int) Math.ceil(q * sorted.length);
    return sorted[Math.max(0, Math.min(sorted.length - 1, rank - 1))];
  }
}
