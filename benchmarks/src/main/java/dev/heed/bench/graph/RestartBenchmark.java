package dev.heed.bench.graph;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.IndexedGraph;
import dev.heed.graph.SavedGraph;
import dev.heed.graph.SavedGraphFile;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
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
 * Restart time: loading a graph with its text ids and features from a {@link SavedGraphFile}
 * against rebuilding it from its edge list (text ids, the CLI's and the scoring example's path) and
 * reading its features from a {@code .npy}. Input: R-MAT (Graph500 initiator, seed 42), 2^scale
 * nodes, 16 edges per node, 16 float features per node, written once per fork to temporary files in
 * {@link #setUp()} (page cache warm, as on a restart of a service whose files were just written).
 *
 * <p>Run: {@code java -jar benchmarks/target/benchmarks.jar RestartBenchmark}
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
@Fork(
    value = 2,
    jvmArgsAppend = {"-Xmx4g"})
public class RestartBenchmark {

  private static final int FEATURES = 16;

  @Param({"18"})
  public int scale;

  private Path edges;
  private Path features;
  private Path saved;

  /** Writes the edge list, the features and the saved graph. */
  @Setup(Level.Trial)
  public void setUp() throws IOException {
    int n = 1 << scale;
    int m = 16 * n;
    int[] s = new int[m];
    int[] t = new int[m];
    RmatGenerator.withScale(scale).edgeCount(m).seed(42L).generateInto(s, t);
    edges = Files.createTempFile("heed-restart-", ".tsv");
    EdgeFiles.writeTsv(edges, s, t);
    IndexedGraph<String> graph =
        EdgeListFileBuilder.stringIds(edges).delimiter('\t').header(true).build().indexed();
    float[] x = new float[graph.graph().nodeCount() * FEATURES];
    SplittableRandom random = new SplittableRandom(42L);
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    features = Files.createTempFile("heed-restart-", ".npy");
    Npy.write(NpyArray.ofFloats(x, graph.graph().nodeCount(), FEATURES), features);
    saved = Files.createTempFile("heed-restart-", ".heedgraph");
    SavedGraphFile.write(
        saved, graph, NodeFeatures.ofRowMajor(x, graph.graph().nodeCount(), FEATURES), 0);
  }

  /** Deletes the files. */
  @TearDown(Level.Trial)
  public void tearDown() throws IOException {
    Files.deleteIfExists(edges);
    Files.deleteIfExists(features);
    Files.deleteIfExists(saved);
  }

  /** Graph, text ids and features from the saved file. */
  @Benchmark
  public SavedGraph<String> loadSaved() throws IOException {
    return SavedGraphFile.readStringIds(saved);
  }

  /** Graph and text ids from the edge list, features from the .npy. */
  @Benchmark
  public Object[] rebuildFromEdgeList() throws IOException {
    IndexedGraph<String> graph =
        EdgeListFileBuilder.stringIds(edges).delimiter('\t').header(true).build().indexed();
    return new Object[] {graph, NodeFeatures.readNpy(features)};
  }
}
