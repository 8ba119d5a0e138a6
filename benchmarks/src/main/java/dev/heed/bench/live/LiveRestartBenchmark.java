package dev.heed.bench.live;

import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SavedGraphFile;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
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
 * Restart time of a live graph: restoring a {@link VersionedGraph} from a file written by {@link
 * LiveSnapshot#saveTo} ({@link SavedGraphFile#readStringIds}, then {@link
 * VersionedGraph.Builder#restore}) against building it again as batches (every node with its
 * features, then every edge once, then a compaction), the way a service had to resume before. The
 * batches start from arrays already in memory, so rebuilding pays no parsing: the cheapest rebuild
 * there is. Input: R-MAT (Graph500 initiator, seed {@value LiveInputs#SEED}), 2^scale nodes, 16
 * edges per node, text ids, 16 float features per node; symmetrised with self-loops and repeats
 * merged (the demo's convention). The file is written once per fork (page cache warm).
 *
 * <p>Run: {@code java -jar benchmarks/target/benchmarks.jar LiveRestartBenchmark}
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 2, time = 2)
@Measurement(iterations = 5, time = 2)
@Fork(
    value = 2,
    jvmArgsAppend = {"-Xmx4g"})
public class LiveRestartBenchmark {

  private static final int FEATURES = 16;

  @Param({"16"})
  public int scale;

  private String[] ids;
  private int[] sources;
  private int[] targets;
  private float[] features;
  private Path saved;

  /** Generates the graph, builds it live once and saves it. */
  @Setup(Level.Trial)
  public void setUp() throws IOException {
    int n = 1 << scale;
    int m = 16 * n;
    sources = new int[m];
    targets = new int[m];
    RmatGenerator.withScale(scale)
        .edgeCount(m)
        .seed(LiveInputs.SEED)
        .generateInto(sources, targets);
    ids = new String[n];
    for (int i = 0; i < n; i++) {
      ids[i] = "node-" + i;
    }
    features = new float[n * FEATURES];
    SplittableRandom random = new SplittableRandom(LiveInputs.SEED);
    for (int i = 0; i < features.length; i++) {
      features[i] = (float) random.nextGaussian();
    }
    saved = Files.createTempFile("heed-live-restart-", ".heedgraph");
    try (VersionedGraph<String> graph = rebuild()) {
      graph.snapshot().saveTo(saved);
    }
  }

  /** Deletes the file. */
  @TearDown(Level.Trial)
  public void tearDown() throws IOException {
    Files.deleteIfExists(saved);
  }

  private static VersionedGraph.Builder builder() {
    return VersionedGraph.builder(FEATURES)
        .direction(DirectionPolicy.SYMMETRISE)
        .selfLoops(SelfLoopPolicy.ADD)
        .duplicates(DuplicatePolicy.MERGE)
        .backgroundCompaction(false);
  }

  private VersionedGraph<String> rebuild() {
    VersionedGraph<String> graph = builder().build();
    UpdateBatch<String> nodes = graph.newBatch();
    float[] row = new float[FEATURES];
    for (int i = 0; i < ids.length; i++) {
      System.arraycopy(features, i * FEATURES, row, 0, FEATURES);
      nodes.addNode(ids[i], row);
    }
    graph.apply(nodes);
    UpdateBatch<String> edges = graph.newBatch();
    for (int e = 0; e < sources.length; e++) {
      edges.addEdge(ids[sources[e]], ids[targets[e]]);
    }
    graph.apply(edges);
    graph.compact();
    return graph;
  }

  /** Read the saved file and restore the live graph from it. */
  @Benchmark
  public long restoreSaved() throws IOException {
    try (VersionedGraph<String> graph = builder().restore(SavedGraphFile.readStringIds(saved))) {
      return graph.snapshot().edgeCount();
    }
  }

  /** Build the live graph again from its nodes and edges, as batches. */
  @Benchmark
  public long rebuildAsBatches() {
    try (VersionedGraph<String> graph = rebuild()) {
      return graph.snapshot().edgeCount();
    }
  }
}
