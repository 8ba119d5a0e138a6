package dev.heed.bench.graph;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.generate.RmatGenerator;
import java.io.BufferedOutputStream;
import java.io.IOException;
import java.io.OutputStream;
import java.io.Reader;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.HashMap;
import java.util.Map;
import java.util.concurrent.TimeUnit;
import java.util.function.Function;
import org.apache.commons.csv.CSVFormat;
import org.apache.commons.csv.CSVParser;
import org.apache.commons.csv.CSVRecord;
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
 * Seconds to build a graph from a CSV edge list with text ids: Heed's own byte-level reader ({@link
 * EdgeListFileBuilder}, two passes, RFC 4180 quoting) against Apache Commons CSV as the line
 * parser, once in two passes like Heed's reader (ids collected, then looked up) and once in a
 * single pass into edge arrays (less parsing, more memory: a lower bound on what the library
 * costs). Input: R-MAT, Graph500 initiator, seed 42, {@code edges} edges over 2^20 node ids,
 * written as {@code source,target} lines after a header, to a temporary file deleted at the end.
 *
 * <p>Run: {@code java -jar benchmarks/target/benchmarks.jar EdgeListCsvBenchmark}
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 2, time = 1)
@Measurement(iterations = 5, time = 1)
@Fork(
    value = 2,
    jvmArgsAppend = {"-Xmx4g"})
public class EdgeListCsvBenchmark {

  /** Edges in the file. */
  @Param({"3000000"})
  public int edges;

  private Path file;

  /** Generates the edges and writes the CSV file. */
  @Setup(Level.Trial)
  public void setUp() throws IOException {
    int[] sources = new int[edges];
    int[] targets = new int[edges];
    RmatGenerator.withScale(EdgeFiles.SCALE)
        .edgeCount(edges)
        .seed(EdgeFiles.SEED)
        .generateInto(sources, targets);
    file = Files.createTempFile("heed-edge-csv-", ".csv");
    try (OutputStream out = new BufferedOutputStream(Files.newOutputStream(file), 1 << 16)) {
      out.write("source,target\n".getBytes(StandardCharsets.US_ASCII));
      for (int k = 0; k < edges; k++) {
        out.write((sources[k] + "," + targets[k] + "\n").getBytes(StandardCharsets.US_ASCII));
      }
    }
  }

  /** Deletes the file. */
  @TearDown(Level.Trial)
  public void tearDown() throws IOException {
    Files.deleteIfExists(file);
  }

  /** Heed's reader: two passes over the bytes, text ids. */
  @Benchmark
  public EdgeListResult<String> heedReader() throws IOException {
    return EdgeListFileBuilder.stringIds(file).header(true).build();
  }

  /** Commons CSV, two passes: ids collected in the first, edges placed in the second. */
  @Benchmark
  public CsrGraph commonsCsvTwoPasses() throws IOException {
    return commonsCsvTwoPasses(Function.identity());
  }

  /** Heed's reader with integer ids (parsed from the bytes, mapped by a primitive hash map). */
  @Benchmark
  public EdgeListResult<Long> heedReaderIntegerIds() throws IOException {
    return EdgeListFileBuilder.integerIds(file).header(true).build();
  }

  /** Commons CSV, two passes, integer ids parsed from each field's text. */
  @Benchmark
  public CsrGraph commonsCsvTwoPassesIntegerIds() throws IOException {
    return commonsCsvTwoPasses(Long::parseLong);
  }

  private <K> CsrGraph commonsCsvTwoPasses(Function<String, K> key) throws IOException {
    Map<K, Integer> ids = new HashMap<>();
    long count = 0;
    try (Reader in = Files.newBufferedReader(file, StandardCharsets.UTF_8);
        CSVParser parser = format().parse(in)) {
      for (CSVRecord r : parser) {
        ids.putIfAbsent(key.apply(r.get(0)), ids.size());
        ids.putIfAbsent(key.apply(r.get(1)), ids.size());
        count++;
      }
    }
    int[] src = new int[(int) count];
    int[] dst = new int[(int) count];
    int k = 0;
    try (Reader in = Files.newBufferedReader(file, StandardCharsets.UTF_8);
        CSVParser parser = format().parse(in)) {
      for (CSVRecord r : parser) {
        src[k] = ids.get(key.apply(r.get(0)));
        dst[k] = ids.get(key.apply(r.get(1)));
        k++;
      }
    }
    return CsrGraphBuilder.fromEdges(src, dst, ids.size()).build();
  }

  /** Commons CSV, one pass into growing edge arrays. */
  @Benchmark
  public CsrGraph commonsCsvOnePass() throws IOException {
    Map<String, Integer> ids = new HashMap<>();
    int[] src = new int[1024];
    int[] dst = new int[1024];
    int k = 0;
    try (Reader in = Files.newBufferedReader(file, StandardCharsets.UTF_8);
        CSVParser parser = format().parse(in)) {
      for (CSVRecord r : parser) {
        if (k == src.length) {
          src = Arrays.copyOf(src, k * 2);
          dst = Arrays.copyOf(dst, k * 2);
        }
        src[k] = ids.computeIfAbsent(r.get(0), id -> ids.size());
        dst[k] = ids.computeIfAbsent(r.get(1), id -> ids.size());
        k++;
      }
    }
    return CsrGraphBuilder.fromEdges(Arrays.copyOf(src, k), Arrays.copyOf(dst, k), ids.size())
        .build();
  }

  private static CSVFormat format() {
    return CSVFormat.RFC4180
        .builder()
        .setHeader()
        .setSkipHeaderRecord(true)
        .setCommentMarker('#')
        .setIgnoreSurroundingSpaces(true)
        .get();
  }
}
