package dev.heed.bench.live;

import dev.heed.live.BatchResult;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Group;
import org.openjdk.jmh.annotations.GroupThreads;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OperationsPerInvocation;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.TearDown;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Ingest rate of a {@link VersionedGraph} with 2 writer threads while a third thread keeps taking
 * snapshots and reading rows from them. Input: R-MAT (Graph500 initiator, scale 20: 1,048,576
 * nodes, 16,777,216 edges, seed {@value LiveInputs#SEED}); node ids are boxed {@code Long}s, 8
 * features per node. Before each iteration a fresh graph gets all nodes with their features
 * (compacted into its base), then the writers add the R-MAT edges in order, each writer its own
 * half, in batches of {@value LiveInputs#BATCH} edges. Default policies (self-loops added,
 * direction kept, duplicates merged).
 *
 * <p>Scores: {@code ingest:write}, edges per second summed over both writers (one op = one edge of
 * a batch, repeats merged by the graph included); {@code ingest:read}, node reads per second (a row
 * and a feature row each, from a snapshot taken every 16 reads). {@code compaction}: {@code
 * background} (the default daemon thread compacts as deltas grow, competing for the same cores) or
 * {@code none} (deltas only). Bytes per edge are measured by {@link VersionedGraphMemory}, not
 * here.
 *
 * <p>Run: {@code java -jar benchmarks/target/benchmarks.jar VersionedGraphBenchmark} (about 70 s).
 */
@State(Scope.Group)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 2, time = 4)
@Measurement(iterations = 3, time = 4)
@Fork(
    value = 1,
    jvmArgsAppend = {"-Xmx6g", "-XX:+UseG1GC"})
public class VersionedGraphBenchmark {

  private static final int WRITERS = 2;
  private static final int READ_NODES = 16;
  private static final int SNAPSHOTS_PER_READ = LiveInputs.BATCH / READ_NODES;

  /** Compaction while ingesting: {@code background} or {@code none}. */
  @Param({"background", "none"})
  public String compaction;

  private int[] sources;
  private int[] targets;
  private Long[] ids;
  private VersionedGraph<Long> graph;
  private final AtomicInteger writerSlots = new AtomicInteger();

  /** Generates the R-MAT edges and the node ids once per fork. */
  @Setup(Level.Trial)
  public void generate() {
    int[][] edges = LiveInputs.rmatEdges();
    sources = edges[0];
    targets = edges[1];
    ids = LiveInputs.nodeIds();
  }

  /** Makes a fresh graph holding every node and its features, and no edges yet. */
  @Setup(Level.Iteration)
  public void freshGraph() {
    graph =
        VersionedGraph.builder(LiveInputs.FEATURES)
            .backgroundCompaction(compaction.equals("background"))
            .build();
    LiveInputs.addNodes(graph, ids);
    writerSlots.set(0);
  }

  /** Closes the iteration's graph. */
  @TearDown(Level.Iteration)
  public void closeGraph() {
    graph.close();
  }

  /** One writer's position in its half of the edges. */
  @State(Scope.Thread)
  public static class WriterCursor {
    int next;
    int end;
    int start;
    UpdateBatch<Long> batch;

    /** Claims the next writer slot's half of the edges. */
    @Setup(Level.Iteration)
    public void claim(VersionedGraphBenchmark shared) {
      int slot = shared.writerSlots.getAndIncrement() % WRITERS;
      int half = LiveInputs.EDGES / WRITERS;
      start = slot * half;
      end = start + half;
      next = start;
      batch = shared.graph.newBatch();
    }
  }

  /** A reader's random node choices. */
  @State(Scope.Thread)
  public static class ReaderState {
    final SplittableRandom random = new SplittableRandom(7);
    final int[] row = new int[1 << 20];
    final float[] features = new float[LiveInputs.FEATURES];
  }

  /**
   * Applies one batch of {@value LiveInputs#BATCH} edges (wrapping round to the writer's first edge
   * if its half runs out, which then only merges repeats).
   */
  @Benchmark
  @Group("ingest")
  @GroupThreads(WRITERS)
  @OperationsPerInvocation(LiveInputs.BATCH)
  public BatchResult write(WriterCursor cursor) {
    UpdateBatch<Long> batch = cursor.batch;
    batch.clear();
    Long[] nodeIds = ids;
    for (int k = 0; k < LiveInputs.BATCH; k++) {
      if (cursor.next == cursor.end) {
        cursor.next = cursor.start;
      }
      int e = cursor.next++;
      batch.addEdge(nodeIds[sources[e]], nodeIds[targets[e]]);
    }
    return graph.apply(batch);
  }

  /**
   * Takes {@value #SNAPSHOTS_PER_READ} snapshots and reads the rows and features of {@value
   * #READ_NODES} random nodes from each: {@value LiveInputs#BATCH} node reads (JMH applies one
   * operations-per-invocation count to a whole group, so both methods count in the same unit).
   */
  @Benchmark
  @Group("ingest")
  @GroupThreads(1)
  @OperationsPerInvocation(LiveInputs.BATCH)
  public long read(ReaderState state) {
    long sum = 0;
    for (int s = 0; s < SNAPSHOTS_PER_READ; s++) {
      LiveSnapshot<Long> snapshot = graph.snapshot();
      sum += snapshot.version();
      int n = snapshot.nodeCount();
      for (int k = 0; k < READ_NODES; k++) {
        int node = state.random.nextInt(n);
        int length = snapshot.copyRow(node, state.row, 0);
        sum += length + (length > 0 ? state.row[length - 1] : 0);
        snapshot.copyRow(node, state.features, 0);
        sum += Float.floatToRawIntBits(state.features[0]);
      }
    }
    return sum;
  }
}
