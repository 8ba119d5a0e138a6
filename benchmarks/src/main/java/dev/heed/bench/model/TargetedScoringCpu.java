package dev.heed.bench.model;

import com.sun.management.OperatingSystemMXBean;
import dev.heed.classify.Classification;
import dev.heed.classify.StaticGraphScorer;
import dev.heed.model.FieldSize;
import dev.heed.model.ModelFormatException;
import dev.heed.model.PathChoice;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.function.IntFunction;

/**
 * The targeted calls of {@link TargetedScoringBenchmark} (same graph, model and query list), timed
 * by the calling thread's CPU time ({@link ThreadMXBean}), the process's CPU time and wall time,
 * for the plain call ({@code NodeClassifier.classify(graph, features, node)}) and for scorers with
 * kept hub rows ({@code NodeClassifier.forStaticGraph}) at one or more in-degree thresholds,
 * alternated node by node in one run: node q is scored by every variant before node q + 1, starting
 * with variant q mod the variant count (so that no variant always follows the plain call, whose
 * large fields leave the heap and caches to the next call). Run it with {@code
 * -XX:ActiveProcessorCount=1}, so that the kernels use one thread and the calling thread's CPU time
 * is the call's work (projections of 2,048 rows or more go to BLAS on ND4J's threads, which only
 * the process figure counts): on a machine shared with other work, CPU time per call says what the
 * code costs and the wall time what the machine allowed. Also prints each scorer's preparation time
 * and kept bytes, the field sizes of each variant, each scorer's largest relative error against the
 * plain call on the same nodes, the load average, and the CPU time of one whole-graph pass.
 * Complements the JMH figures; it does not replace them.
 *
 * <p>Run: {@code java --add-modules jdk.incubator.vector -Xmx8g -XX:ActiveProcessorCount=1 -cp
 * benchmarks/target/benchmarks.jar dev.heed.bench.model.TargetedScoringCpu [warm-up calls] [timed
 * calls] [plain calls] [hub degrees] [whole passes]} (defaults 2,000, 10,000, 2,000, {@code 128}
 * and 1; hub degrees comma-separated, for example {@code 32,64,128,256}; the timed calls walk the
 * query list from its start, the plain variant only its first {@code plain calls} nodes, since a
 * plain call costs tens of milliseconds on average; warm-up calls walk it from the end, a quarter
 * of them for the plain variant).
 */
public final class TargetedScoringCpu {

  private TargetedScoringCpu() {}

  /** One variant's timings and field sizes, call by call. */
  private static final class Variant {
    final String name;
    final IntFunction<Classification> call;
    final List<long[]> samples = new ArrayList<>(); // cpu, process cpu, wall, nodes, entries, kept
    double maxError; // largest norm-wise relative error against the plain call on the same node
    float[] last; // this node's probabilities

    Variant(String name, IntFunction<Classification> call) {
      this.name = name;
      this.call = call;
    }
  }

  /**
   * Entry point.
   *
   * @param args optional: warm-up calls, timed calls, plain calls, hub degrees, whole passes
   * @throws ModelFormatException never (the model is built in code)
   */
  public static void main(String[] args) throws ModelFormatException {
    int warmup = args.length > 0 ? Integer.parseInt(args[0]) : 2_000;
    int timed = args.length > 1 ? Integer.parseInt(args[1]) : 10_000;
    int plainCalls = args.length > 2 ? Integer.parseInt(args[2]) : 2_000;
    int[] hubDegrees =
        Arrays.stream((args.length > 3 ? args[3] : "128").split(","))
            .mapToInt(Integer::parseInt)
            .toArray();
    int wholePasses = args.length > 4 ? Integer.parseInt(args[4]) : 1;
    OperatingSystemMXBean os = (OperatingSystemMXBean) ManagementFactory.getOperatingSystemMXBean();
    ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
    System.out.printf(
        Locale.ROOT,
        "JDK %s, %d processors visible, load average %.2f at start%n",
        Runtime.version(),
        Runtime.getRuntime().availableProcessors(),
        os.getSystemLoadAverage());
    TargetedScoringBenchmark b = new TargetedScoringBenchmark();
    b.scale = 20;
    b.edgeFactor = 16;
    b.queries = Math.max(warmup, timed);
    b.seed = 20260611;
    b.setUp();
    List<Variant> variants = new ArrayList<>();
    variants.add(new Variant("plain", node -> b.classifier.classify(b.graph, b.features, node)));
    for (int t : hubDegrees) {
      long p0 = os.getProcessCpuTime();
      long w0 = System.nanoTime();
      StaticGraphScorer scorer = b.classifier.forStaticGraph(b.graph, b.features, t);
      System.out.printf(
          Locale.ROOT,
          "kept T=%d: %,d hub rows, %,d bytes (%.1f MiB), prepared in %.1f s wall, %.1f s process"
              + " CPU; load average %.2f%n",
          t,
          scorer.keptRowCount(),
          scorer.keptBytes(),
          scorer.keptBytes() / 1048576.0,
          (System.nanoTime() - w0) / 1e9,
          (os.getProcessCpuTime() - p0) / 1e9,
          os.getSystemLoadAverage());
      variants.add(new Variant("kept T=" + t, scorer::classify));
    }
    for (int pass = 0; pass < wholePasses; pass++) {
      long p0 = os.getProcessCpuTime();
      long c0 = cpu.getCurrentThreadCpuTime();
      long w0 = System.nanoTime();
      b.model.forward(b.graph, b.values, PathChoice.SPARSE, false);
      System.out.printf(
          Locale.ROOT,
          "whole-graph pass %d: %.2f s calling-thread CPU, %.2f s process CPU, %.2f s wall%n",
          pass,
          (cpu.getCurrentThreadCpuTime() - c0) / 1e9,
          (os.getProcessCpuTime() - p0) / 1e9,
          (System.nanoTime() - w0) / 1e9);
    }
    // warm-up from the end of the list, so the timed calls see nodes not yet scored
    for (int q = 0; q < warmup; q++) {
      int node = b.targets[b.targets.length - 1 - q];
      for (Variant v : variants) {
        if (v.name.equals("plain") && q >= warmup / 4) {
          continue;
        }
        v.call.apply(node);
      }
    }
    for (int q = 0; q < timed; q++) {
      int node = b.targets[q];
      for (int k = 0; k < variants.size(); k++) {
        // the first variant of a node changes from node to node: each follows the others equally
        Variant v = variants.get((q + k) % variants.size());
        if (v.name.equals("plain") && q >= plainCalls) {
          continue;
        }
        long c0 = cpu.getCurrentThreadCpuTime();
        long p0 = os.getProcessCpuTime();
        long w0 = System.nanoTime();
        Classification c = v.call.apply(node);
        long wall = System.nanoTime() - w0;
        long process = os.getProcessCpuTime() - p0;
        long thread = cpu.getCurrentThreadCpuTime() - c0;
        v.last = c.forNode(node).probabilities();
        FieldSize size = c.fieldSize();
        v.samples.add(
            new long[] {thread, process, wall, size.nodes(), size.entries(), size.keptRows()});
      }
      if (q < plainCalls) {
        for (Variant v : variants.subList(1, variants.size())) {
          v.maxError = Math.max(v.maxError, relativeError(variants.get(0).last, v.last));
        }
      }
    }
    System.out.printf(Locale.ROOT, "load average %.2f at end%n", os.getSystemLoadAverage());
    for (Variant v : variants.subList(1, variants.size())) {
      System.out.printf(
          Locale.ROOT,
          "%s: largest relative error against the plain call, first %d nodes: %.2e%n",
          v.name,
          Math.min(plainCalls, timed),
          v.maxError);
    }
    for (Variant v : variants) {
      System.out.println("== " + v.name + " (" + v.samples.size() + " calls)");
      report("cpu ms ", v, 0, 1e6);
      report("proc ms", v, 1, 1e6);
      report("wall ms", v, 2, 1e6);
      report("nodes  ", v, 3, 1);
      report("entries", v, 4, 1);
      report("kept   ", v, 5, 1);
    }
  }

  /** Largest difference over largest expected value (norm-wise relative error). */
  private static double relativeError(float[] expected, float[] actual) {
    double diff = 0;
    double size = 0;
    for (int i = 0; i < expected.length; i++) {
      diff = Math.max(diff, Math.abs((double) expected[i] - actual[i]));
      size = Math.max(size, Math.abs(expected[i]));
    }
    return size == 0 ? diff : diff / size;
  }

  private static void report(String what, Variant v, int column, double unit) {
    long[] sorted = v.samples.stream().mapToLong(s -> s[column]).sorted().toArray();
    System.out.printf(
        Locale.ROOT,
        "%s p50 %.3f  p90 %.3f  p99 %.3f  max %.3f  mean %.3f%n",
        what,
        at(sorted, 0.50) / unit,
        at(sorted, 0.90) / unit,
        at(sorted, 0.99) / unit,
        sorted[sorted.length - 1] / unit,
        Arrays.stream(sorted).average().orElse(0) / unit);
  }

  private static double at(long[] sorted, double p) {
    return sorted[(int) Math.min(sorted.length - 1, Math.floor(p * sorted.length))];
  }
}
