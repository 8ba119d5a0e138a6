package dev.heed.bench.graph;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.LongNodeIndex;
import java.io.IOException;
import java.lang.management.ManagementFactory;
import java.lang.management.MemoryMXBean;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import java.util.concurrent.TimeUnit;

/**
 * Measures how much heap building a graph from a 10-million-edge edge-list file needs, compared
 * with the finished CSR plus id map (the target: under 2x).
 *
 * <p>Method. (1) The finished size is counted from the array lengths ({@link
 * CsrGraph#storageBytes()} plus {@link LongNodeIndex#storageBytes()}) and checked by GC-and-sample:
 * used heap after {@code System.gc()} with the result held, minus used heap after {@code
 * System.gc()} before the build. (2) The peak is bounded from above by the smallest {@code -Xmx}
 * under which a fresh JVM completes the build (bisection over child JVMs, G1, to within 4 MiB,
 * starting from the finished size): a build that fits in that heap never had more live data than
 * it. The bound includes the JVM's own baseline heap (class metadata is off-heap; the baseline is
 * printed), so it overstates the builder's own peak slightly.
 *
 * <p>Run: {@code java -cp benchmarks/target/benchmarks.jar dev.heed.bench.graph.GraphBuildMemory
 * [edge-file]} (the file is generated into a temporary directory when not given; {@code write
 * <file>} writes it only).
 */
public final class GraphBuildMemory {

  private static final long MIB = 1L << 20;

  private GraphBuildMemory() {}

  /**
   * Entry point.
   *
   * @param args none, {@code <file>} (measure on an existing file), {@code write <file>} (only
   *     write the benchmark file), or {@code child <file> <mode>} (internal)
   * @throws Exception on failure
   */
  public static void main(String[] args) throws Exception {
    if (args.length == 3 && args[0].equals("child")) {
      child(Path.of(args[1]), args[2]);
      return;
    }
    if (args.length == 2 && args[0].equals("write")) {
      int[][] edges = EdgeFiles.rmatEdges();
      EdgeFiles.writeTsv(Path.of(args[1]), edges[0], edges[1]);
      return;
    }
    Path file;
    boolean generated = args.length == 0;
    if (generated) {
      file = Files.createTempFile("heed-graph-memory-", ".tsv");
      int[][] edges = EdgeFiles.rmatEdges();
      EdgeFiles.writeTsv(file, edges[0], edges[1]);
    } else {
      file = Path.of(args[0]);
    }
    try {
      say(
          "file %s, %d MiB, %d edges (R-MAT scale %d, seed %d)",
          file, Files.size(file) / MIB, EdgeFiles.EDGES, EdgeFiles.SCALE, EdgeFiles.SEED);
      for (String mode : new String[] {"index", "mapped"}) {
        List<String> report = runChild(file, mode, 4096);
        if (report == null) {
          say("%s: the build failed even with -Xmx4096m", mode);
          continue;
        }
        report.forEach(line -> say("%s: %s", mode, line));
        long finished = Long.parseLong(value(report, "finishedBytes"));
        // The build cannot fit in less than its result; start the search there.
        long lo = Math.max(8, finished / MIB);
        long hi = 2 * lo + 16;
        while (runChild(file, mode, hi) == null && hi < 4096) {
          lo = hi;
          hi *= 2;
        }
        while (hi - lo > 4) {
          long mid = (lo + hi) / 2;
          if (runChild(file, mode, mid) != null) {
            hi = mid;
          } else {
            lo = mid;
          }
        }
        say(
            "%s: smallest -Xmx that completes the build: %d MiB (fails at %d MiB); finished graph"
                + " + id map: %.1f MiB; ratio %.2f",
            mode, hi, lo, finished / (double) MIB, hi * MIB / (double) finished);
      }
    } finally {
      if (generated) {
        Files.deleteIfExists(file);
      }
    }
  }

  private static String value(List<String> report, String key) {
    for (String line : report) {
      if (line.startsWith(key + "=")) {
        return line.substring(key.length() + 1);
      }
    }
    throw new IllegalStateException("child did not report " + key + ": " + report);
  }

  /** Runs one build in a fresh JVM with the given heap; returns its report, or null on failure. */
  private static List<String> runChild(Path file, String mode, long heapMiB)
      throws IOException, InterruptedException {
    String java = Path.of(System.getProperty("java.home"), "bin", "java").toString();
    List<String> command = new ArrayList<>();
    command.add(java);
    command.add("-Xmx" + heapMiB + "m");
    command.add("-XX:+UseG1GC");
    command.add("-Dorg.slf4j.simpleLogger.defaultLogLevel=warn");
    command.add("-cp");
    command.add(System.getProperty("java.class.path"));
    command.add(GraphBuildMemory.class.getName());
    command.add("child");
    command.add(file.toString());
    command.add(mode);
    Process process = new ProcessBuilder(command).redirectErrorStream(true).start();
    byte[] output = process.getInputStream().readAllBytes();
    if (!process.waitFor(300, TimeUnit.SECONDS)) {
      process.destroyForcibly();
      return null;
    }
    List<String> lines = new String(output, "UTF-8").lines().toList();
    if (process.exitValue() != 0 || lines.stream().noneMatch(l -> l.startsWith("ok"))) {
      return null;
    }
    return lines;
  }

  /** In the child JVM: measure the baseline, build, report sizes. */
  private static void child(Path file, String mode) throws IOException {
    MemoryMXBean memory = ManagementFactory.getMemoryMXBean();
    long before = usedAfterGc(memory);
    long start = System.nanoTime();
    long cpuStart = ManagementFactory.getThreadMXBean().getCurrentThreadCpuTime();
    EdgeListResult<Long> result =
        mode.equals("index")
            ? EdgeListFileBuilder.indexIds(file).delimiter('\t').header(true).build()
            : EdgeListFileBuilder.integerIds(file).delimiter('\t').header(true).build();
    long nanos = System.nanoTime() - start;
    long cpuNanos = ManagementFactory.getThreadMXBean().getCurrentThreadCpuTime() - cpuStart;
    long after = usedAfterGc(memory);
    CsrGraph graph = result.graph();
    long graphBytes = graph.storageBytes();
    long mapBytes = ((LongNodeIndex) result.nodes()).storageBytes();
    List<String> out = new ArrayList<>();
    out.add("nodes=" + graph.nodeCount());
    out.add("entries=" + graph.edgeCount());
    out.add("graphBytes=" + graphBytes);
    out.add("mapBytes=" + mapBytes);
    out.add("finishedBytes=" + (graphBytes + mapBytes));
    out.add("baselineHeapBytes=" + before);
    out.add("retainedBytesByGcSample=" + (after - before));
    out.add(String.format(Locale.ROOT, "buildSeconds=%.2f", nanos / 1e9));
    out.add(String.format(Locale.ROOT, "buildThreadCpuSeconds=%.2f", cpuNanos / 1e9));
    out.add("ok");
    // A benchmark program's own report on its standard output (not library code).
    out.forEach(System.out::println);
  }

  private static long usedAfterGc(MemoryMXBean memory) {
    for (int i = 0; i < 3; i++) {
      System.gc();
    }
    return memory.getHeapMemoryUsage().getUsed();
  }

  private static void say(String format, Object... args) {
    System.out.println(String.format(Locale.ROOT, format, args));
  }
}
