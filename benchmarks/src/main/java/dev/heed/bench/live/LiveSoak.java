package dev.heed.bench.live;

import dev.heed.attention.KernelOptions;
import dev.heed.bench.model.TargetedScoringBenchmark;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveMemory;
import dev.heed.live.LiveScore;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.Subscription;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFormatException;
import dev.heed.model.PathChoice;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.lang.management.ThreadMXBean;
import java.util.ArrayDeque;
import java.util.Arrays;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.concurrent.atomic.AtomicLong;
import javax.management.JMException;
import javax.management.ObjectName;

/**
 * Soak of the live graph and its incremental scorer: many sequential single-node score requests
 * with updates interleaved, checking that the heap does not grow.
 *
 * <p>Set-up: the graph of {@link LiveRefreshBenchmark} ({@link RmatLiveGraph}, scale 16 by default:
 * 65,536 nodes), with background compaction on, and the same model and scorer (sparse path, one
 * kernel thread, no work budget), plus one threshold subscription that is closed and replaced every
 * 1,000 requests. Each request scores one uniformly drawn node by id; before every {@code
 * updateEvery}-th request, one update batch is applied and the scorer refreshed. Updates cycle
 * through: insert a random edge that is not present, insert another, remove the oldest edge this
 * run inserted, remove the next oldest, set a random node's features; so the edge count stays
 * within a few edges of the start and any lasting growth is the code's, not the graph's.
 *
 * <p>The heap used after a full collection is sampled after a warm-up of {@value #WARM_UP} requests
 * and a compaction (the "before"), every 10,000 requests (without compacting, beside the live
 * graph's own count of its row and feature deltas, which it keeps until a compaction folds them
 * into a new base) and at the end after a compaction (the "after"); the sampling is outside the
 * timed calls. Printed: the samples, the difference, and the distributions of request latency
 * (wall), update-and-refresh latency (wall and the calling thread's CPU) and affected nodes. Run
 * with the serial collector, whose used heap after a full collection is exact:
 *
 * <pre>
 * java --add-modules jdk.incubator.vector -Xmx4g -XX:+UseSerialGC \
 *   -cp benchmarks/target/benchmarks.jar dev.heed.bench.live.LiveSoak [scale] [requests] [updateEvery]
 * </pre>
 */
public final class LiveSoak {

  private static final int SAMPLE_EVERY = 10_000;
  private static final int RESUBSCRIBE_EVERY = 1_000;
  private static final int WARM_UP = 10_000;
  private static final long SEED = 20260611L;

  private final VersionedGraph<Integer> graph;
  private final IncrementalScorer<Integer> scorer;
  private final SplittableRandom random = new SplittableRandom(SEED ^ 0x50A4L);
  private final ArrayDeque<int[]> inserted = new ArrayDeque<>();
  private final ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
  private final AtomicLong crossings = new AtomicLong();
  private Subscription subscription;
  private int updates;

  private LiveSoak(VersionedGraph<Integer> graph, IncrementalScorer<Integer> scorer) {
    this.graph = graph;
    this.scorer = scorer;
    this.subscription = subscribe();
  }

  /**
   * Entry point.
   *
   * @param args optional: scale (16), requests (100,000), updateEvery (10)
   * @throws ModelFormatException never (the model is built in code)
   */
  public static void main(String[] args) throws ModelFormatException {
    int scale = args.length > 0 ? Integer.parseInt(args[0]) : 16;
    int requests = args.length > 1 ? Integer.parseInt(args[1]) : 100_000;
    int updateEvery = args.length > 2 ? Integer.parseInt(args[2]) : 10;
    SplittableRandom features = new SplittableRandom(SEED);
    VersionedGraph<Integer> graph = RmatLiveGraph.load(scale, 16, SEED, features, true);
    AttentionModel model =
        TargetedScoringBenchmark.model(features)
            .withKernelOptions(KernelOptions.defaults().withThreads(1));
    try (IncrementalScorer<Integer> scorer =
        IncrementalScorer.create(
            model, graph, RefreshOptions.defaults().withPath(PathChoice.SPARSE))) {
      LiveSoak soak = new LiveSoak(graph, scorer);
      LiveSnapshot<Integer> start = graph.snapshot();
      say(
          "graph: %,d nodes, %,d row entries; %,d requests, an update before every %d-th",
          start.nodeCount(), start.edgeCount(), requests, updateEvery);
      soak.run(WARM_UP, updateEvery, false);
      graph.compact();
      scorer.refresh(); // moves to the compacted snapshot, releasing the old base
      long before = usedAfterGc();
      say("heap used after compaction and a full GC, before: %,d bytes", before);
      histogram();
      soak.run(requests, updateEvery, true);
      graph.compact();
      scorer.refresh();
      long after = usedAfterGc();
      LiveSnapshot<Integer> end = graph.snapshot();
      say(
          "heap used after compaction and a full GC, after: %,d bytes; after - before: %+,d bytes"
              + " (%+.3f %%)",
          after, after - before, 100.0 * (after - before) / before);
      histogram();
      say(
          "graph at the end: version %d, %,d row entries, compact: %s; threshold crossings"
              + " delivered: %,d",
          end.version(), end.edgeCount(), end.isCompact(), soak.crossings.get());
    } finally {
      graph.close();
    }
  }

  /**
   * Runs {@code requests} requests; when {@code print}, samples the heap every {@value
   * #SAMPLE_EVERY} requests and prints the distributions.
   */
  private void run(int requests, int updateEvery, boolean print) {
    long[] requestNanos = new long[requests];
    int updateCount = (requests + updateEvery - 1) / updateEvery;
    long[] updateNanos = new long[updateCount];
    long[] updateCpuMicros = new long[updateCount];
    long[] affected = new long[updateCount];
    int u = 0;
    long checksum = 0;
    for (int r = 0; r < requests; r++) {
      if (r % updateEvery == 0) {
        long cpuStart = cpu.getCurrentThreadCpuTime();
        long wallStart = System.nanoTime();
        RefreshReport report = update();
        updateNanos[u] = System.nanoTime() - wallStart;
        updateCpuMicros[u] = (cpu.getCurrentThreadCpuTime() - cpuStart) / 1000;
        affected[u++] = report.affectedNodes();
        if (!report.isComplete()) {
          throw new IllegalStateException("a refresh without a work budget left " + report);
        }
      }
      if (r % RESUBSCRIBE_EVERY == 0) {
        subscription.close();
        subscription = subscribe();
      }
      int node = random.nextInt(graph.snapshot().nodeCount());
      long start = System.nanoTime();
      LiveScore<Integer> score = scorer.score(node);
      requestNanos[r] = System.nanoTime() - start;
      if (!score.isFresh()) {
        throw new IllegalStateException("node " + node + " is " + score.state());
      }
      checksum += score.topClass();
      if (print && (r + 1) % SAMPLE_EVERY == 0) {
        long used = usedAfterGc();
        LiveMemory memory = graph.snapshot().memory();
        say(
            "  after %,7d requests: heap used after full GC %,d bytes; the graph's row deltas %,d"
                + " bytes, feature deltas %,d bytes",
            r + 1, used, memory.deltaBytes(), memory.featureDeltaBytes());
      }
    }
    if (print) {
      say("request (score one node), wall ns: %s", Percentiles.describe(requestNanos));
      say(
          "update + refresh (%,d), wall µs: %s",
          u, Percentiles.describe(Arrays.stream(updateNanos).map(t -> t / 1000).toArray()));
      say("update + refresh, thread CPU µs: %s", Percentiles.describe(updateCpuMicros));
      say("affected nodes per update: %s", Percentiles.describe(affected));
      say("(top-class checksum %d)", checksum);
    }
  }

  /** Applies the next update of the cycle and refreshes the scorer. */
  private RefreshReport update() {
    UpdateBatch<Integer> batch = graph.newBatch();
    int kind = updates++ % 5;
    LiveSnapshot<Integer> now = graph.snapshot();
    int n = now.nodeCount();
    if (kind < 2 || (kind < 4 && inserted.isEmpty())) {
      int a;
      int b;
      do {
        a = random.nextInt(n);
        b = random.nextInt(n);
      } while (a == b || now.hasEdge(a, b));
      batch.addEdge(a, b);
      inserted.addLast(new int[] {a, b});
    } else if (kind < 4) {
      int[] edge = inserted.removeFirst();
      batch.removeEdge(edge[0], edge[1]);
    } else {
      batch.setFeatures(random.nextInt(n), RmatLiveGraph.gaussianRow(random));
    }
    graph.apply(batch);
    return scorer.refresh();
  }

  private Subscription subscribe() {
    return scorer.onThreshold("a", 0.5f, crossing -> crossings.incrementAndGet());
  }

  private static long usedAfterGc() {
    MemoryMXBean memory = ManagementFactory.getMemoryMXBean();
    for (int i = 0; i < 3; i++) {
      System.gc();
    }
    return memory.getHeapMemoryUsage().getUsed();
  }

  /**
   * With {@code -Dheed.soak.histogram=N}, prints the N largest lines of the heap's class histogram
   * and its total (the JVM's GC.class_histogram diagnostic command, which collects first: live
   * objects only, the exact figure where the used heap after {@code System.gc()} still varies).
   */
  private static void histogram() {
    int lines = Integer.getInteger("heed.soak.histogram", 0);
    if (lines <= 0) {
      return;
    }
    try {
      Object text =
          ManagementFactory.getPlatformMBeanServer()
              .invoke(
                  new ObjectName("com.sun.management:type=DiagnosticCommand"),
                  "gcClassHistogram",
                  new Object[] {null},
                  new String[] {String[].class.getName()});
      String[] all = text.toString().split("\n");
      for (int i = 0; i < Math.min(all.length - 1, lines + 2); i++) {
        say("  %s", all[i]);
      }
      say("  %s", all[all.length - 1]); // the total
    } catch (JMException e) {
      say("  (no class histogram: %s)", e);
    }
  }

  private static void say(String format, Object... args) {
    System.out.printf(Locale.ROOT, format + "%n", args);
  }
}
