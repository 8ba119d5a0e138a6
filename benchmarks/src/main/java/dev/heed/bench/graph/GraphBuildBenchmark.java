package dev.heed.bench.graph;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.generate.RmatGenerator;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OperationsPerInvocation;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.TearDown;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Build throughput in input edges per second (JMH "ops/s", one op = one input edge): CSR from two
 * int arrays, from a 10-million-edge TSV file (index ids and mapped integer ids), and the R-MAT
 * generator itself. Input: R-MAT, scale 20 (2^20 nodes), 10,000,000 edges, Graph500 initiator, seed
 * 42, generated once per fork in {@link #setUp()}; the file is written to a temporary file and
 * deleted in {@link #tearDown()}. Peak memory is measured by {@link GraphBuildMemory}, not here.
 *
 * <p>Run: {@code java -jar benchmarks/target/benchmarks.jar GraphBuildBenchmark}
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.Throughput)
@OutputTimeUnit(TimeUnit.SECONDS)
@Warmup(iterations = 2, time = 5)
@Measurement(iterations = 5, time = 5)
@Fork(
    value = 1,
    jvmArgsAppend = {"-Xmx4g"})
public class GraphBuildBenchmark {

  private int[] sources;
  private int[] targets;
  private int nodeCount;
  private Path file;

  /** Generates the R-MAT edges and writes them to a temporary TSV file. */
  @Setup(Level.Trial)
  public void setUp() throws IOException {
    int[][] edges = EdgeFiles.rmatEdges();
    sources = edges[0];
    targets = edges[1];
    nodeCount = 1 << EdgeFiles.SCALE;
    file = Files.createTempFile("heed-graph-build-", ".tsv");
    EdgeFiles.writeTsv(file, sources, targets);
  }

  /** Deletes the temporary file. */
  @TearDown(Level.Trial)
  public void tearDown() throws IOException {
    Files.deleteIfExists(file);
  }

  /** CSR from arrays, GAT convention (self-loops added), duplicates merged. */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public CsrGraph fromArrays() {
    return CsrGraphBuilder.fromEdges(sources, targets, nodeCount).build();
  }

  /** CSR from arrays, symmetrised. */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public CsrGraph fromArraysSymmetrised() {
    return CsrGraphBuilder.fromEdges(sources, targets, nodeCount)
        .direction(dev.heed.graph.DirectionPolicy.SYMMETRISE)
        .build();
  }

  /** CSR from the TSV file, ids used as node indices (no map). */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public EdgeListResult<Long> fromFileIndexIds() throws IOException {
    return EdgeListFileBuilder.indexIds(file)
        .delimiter('\t')
        .header(true)
        .nodeCount(nodeCount)
        .build();
  }

  /** CSR from the TSV file, integer ids mapped to indices (primitive hash map). */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public EdgeListResult<Long> fromFileMappedIds() throws IOException {
    return EdgeListFileBuilder.integerIds(file).delimiter('\t').header(true).build();
  }

  /** CSR from the TSV file, ids read as strings. */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public EdgeListResult<String> fromFileStringIds() throws IOException {
    return EdgeListFileBuilder.stringIds(file).delimiter('\t').header(true).build();
  }

  /** R-MAT generation alone, 10M edges at scale 20, into preallocated arrays. */
  @Benchmark
  @OperationsPerInvocation(EdgeFiles.EDGES)
  public int[] rmatGenerate() {
    RmatGenerator.withScale(EdgeFiles.SCALE)
        .edgeCount(EdgeFiles.EDGES)
        .seed(EdgeFiles.SEED)
        .generateInto(sources, targets);
    return sources;
  }
}
