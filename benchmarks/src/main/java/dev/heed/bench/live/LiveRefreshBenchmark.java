package dev.heed.bench.live;

import dev.heed.attention.KernelOptions;
import dev.heed.bench.model.TargetedScoringBenchmark;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFormatException;
import dev.heed.model.PathChoice;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.Arrays;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.TearDown;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Keeping every node's scores fresh after one edge insert: {@link IncrementalScorer#refresh()} on
 * an R-MAT graph ({@link RmatGenerator}, Graph500 initiator, scrambled ids) of {@code 2^scale}
 * nodes and {@code edgeFactor · 2^scale} generated edges, symmetrised, self-loops added, repeats
 * merged (scale 20: 1,048,576 nodes, about 32.5 M row entries), held in a {@link VersionedGraph}
 * (loaded in batches, then compacted). The model is {@link TargetedScoringBenchmark#model}'s: two
 * GAT layers of 8 heads × 8 dims, a dense layer to 4 classes, softmax; 64 seeded Gaussian input
 * features. Sparse path, one kernel thread ({@code threads}), unlimited work budget.
 *
 * <p>One operation: apply a batch inserting one seeded random edge (uniform endpoints, not already
 * present; the apply costs microseconds) and refresh the scorer. Sample-time mode: read the p0.50
 * and p0.99 of the per-call distribution. At the end of the trial the fork prints the distribution
 * of the affected-node counts, rows recomputed, work and the calling thread's CPU time (all of the
 * work with one kernel thread, whatever else the machine runs) over the calls measured and warmed
 * up, and the scorer's memory: counted from its arrays and measured as the heap used after a full
 * GC with and without it. Run with, for example:
 *
 * <pre>
 * java -jar benchmarks/target/benchmarks.jar LiveRefreshBenchmark -rf json -rff live-refresh.json
 * </pre>
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.SampleTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Fork(
    value = 1,
    jvmArgsAppend = {
      "--add-modules",
      "jdk.incubator.vector",
      "-Xmx10g",
      "-XX:+UseTransparentHugePages"
    })
public class LiveRefreshBenchmark {

  /** log2 of the node count. */
  @Param({"20"})
  public int scale;

  /** Generated edges per node (before symmetrising). */
  @Param({"16"})
  public int edgeFactor;

  /** Seed of the graph, features, weights and inserted edges. */
  @Param({"20260611"})
  public long seed;

  /**
   * Kernel threads per call ({@code KernelOptions.threads}); 1 by default: a refresh's calls are
   * small, and with one thread the calling thread's CPU time is the whole of the work.
   */
  @Param({"1"})
  public int threads;

  private static final int MAX_CALLS = 1 << 20;

  private VersionedGraph<Integer> graph;
  private IncrementalScorer<Integer> scorer;
  private SplittableRandom edges;
  private int[] affected;
  private int[] rows;
  private long[] work;
  private long[] cpuNanos;
  private int calls;
  private final ThreadMXBean cpu = ManagementFactory.getThreadMXBean();

  /** Loads the graph, builds the model and the scorer (one full pass), measures its memory. */
  @Setup(Level.Trial)
  public void setUp() throws ModelFormatException {
    int n = 1 << scale;
    SplittableRandom random = new SplittableRandom(seed);
    graph = RmatLiveGraph.load(scale, edgeFactor, seed, random, false);
    LiveSnapshot<Integer> loaded = graph.snapshot();
    AttentionModel model =
        TargetedScoringBenchmark.model(random)
            .withKernelOptions(KernelOptions.defaults().withThreads(threads));
    long before = usedAfterGc();
    long start = System.nanoTime();
    scorer =
        IncrementalScorer.create(
            model, graph, RefreshOptions.defaults().withPath(PathChoice.SPARSE));
    long createNanos = System.nanoTime() - start;
    long measured = usedAfterGc() - before;
    long counted = scorer.stateBytes();
    System.out.printf(
        Locale.ROOT,
        "%ngraph: %,d nodes, %,d row entries; scorer created (one full pass) in %.1f s%n"
            + "scorer memory: counted %,d bytes (%.1f per node), heap after GC +%,d bytes (%.1f"
            + " per node)%n",
        loaded.nodeCount(),
        loaded.edgeCount(),
        createNanos / 1e9,
        counted,
        counted / (double) n,
        measured,
        measured / (double) n);
    edges = new SplittableRandom(seed ^ 0x5DEECE66DL);
    affected = new int[MAX_CALLS];
    rows = new int[MAX_CALLS];
    work = new long[MAX_CALLS];
    cpuNanos = new long[MAX_CALLS];
  }

  private static long usedAfterGc() {
    Runtime runtime = Runtime.getRuntime();
    for (int i = 0; i < 3; i++) {
      System.gc();
    }
    return runtime.totalMemory() - runtime.freeMemory();
  }

  /**
   * Inserts one random edge and refreshes.
   *
   * @return the refresh's report (consumed by JMH)
   */
  @Benchmark
  @Warmup(iterations = 1, time = 20)
  @Measurement(iterations = 1, time = 60)
  public RefreshReport insertEdgeAndRefresh() {
    LiveSnapshot<Integer> now = graph.snapshot();
    int n = now.nodeCount();
    int a;
    int b;
    do {
      a = edges.nextInt(n);
      b = edges.nextInt(n);
    } while (a == b || now.hasEdge(a, b));
    long cpuStart = cpu.getCurrentThreadCpuTime();
    graph.apply(graph.newBatch().addEdge(a, b));
    RefreshReport report = scorer.refresh();
    if (calls < MAX_CALLS) {
      cpuNanos[calls] = cpu.getCurrentThreadCpuTime() - cpuStart;
      affected[calls] = report.affectedNodes();
      rows[calls] = (int) Math.min(Integer.MAX_VALUE, report.rowsComputed());
      work[calls] = report.entriesComputed();
      calls++;
    }
    return report;
  }

  /** Prints the distributions of affected nodes, rows and work per call, and closes. */
  @TearDown(Level.Trial)
  public void tearDown() {
    System.out.printf(
        Locale.ROOT,
        "%n%,d calls; affected nodes %s; rows recomputed %s; work (entries + rows) %s;"
            + " thread CPU µs per call %s%n",
        calls,
        Percentiles.describe(Arrays.stream(affected, 0, calls).asLongStream().toArray()),
        Percentiles.describe(Arrays.stream(rows, 0, calls).asLongStream().toArray()),
        Percentiles.describe(Arrays.copyOf(work, calls)),
        Percentiles.describe(Arrays.stream(cpuNanos, 0, calls).map(t -> t / 1000).toArray()));
    scorer.close();
    graph.close();
  }
}
