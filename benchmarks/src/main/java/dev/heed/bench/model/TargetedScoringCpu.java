package dev.heed.bench.model;

import dev.heed.model.ModelFormatException;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.Arrays;
import java.util.Locale;

/**
 * The targeted calls of {@link TargetedScoringBenchmark} (same graph, model and query list), timed
 * by the calling thread's CPU time ({@link ThreadMXBean}) as well as wall time. Run it with {@code
 * -XX:ActiveProcessorCount=1}, so that the kernels use one thread and the calling thread's CPU time
 * is the whole call's work: on a machine shared with other work, CPU time per call says what the
 * code costs and the wall time what the machine allowed. Complements the JMH figures; it does not
 * replace them.
 *
 * <p>Run: {@code java --add-modules jdk.incubator.vector -Xmx8g -XX:ActiveProcessorCount=1 -cp
 * benchmarks/target/benchmarks.jar dev.heed.bench.model.TargetedScoringCpu [warm-up calls] [timed
 * calls]} (defaults 2,000 and 10,000; the timed calls walk the query list from its start).
 */
public final class TargetedScoringCpu {

  private TargetedScoringCpu() {}

  /**
   * Entry point.
   *
   * @param args optional: warm-up calls, timed calls
   * @throws ModelFormatException never (the model is built in code)
   */
  public static void main(String[] args) throws ModelFormatException {
    int warmup = args.length > 0 ? Integer.parseInt(args[0]) : 2_000;
    int timed = args.length > 1 ? Integer.parseInt(args[1]) : 10_000;
    TargetedScoringBenchmark b = new TargetedScoringBenchmark();
    b.scale = 20;
    b.edgeFactor = 16;
    b.queries = Math.max(warmup, timed);
    b.seed = 20260611;
    b.setUp();
    ThreadMXBean cpu = ManagementFactory.getThreadMXBean();
    // warm-up from the end of the list, so the timed calls see nodes not yet scored
    for (int q = 0; q < warmup; q++) {
      b.classifier.classify(b.graph, b.features, b.targets[b.targets.length - 1 - q]);
    }
    long[] cpuNanos = new long[timed];
    long[] wallNanos = new long[timed];
    for (int q = 0; q < timed; q++) {
      long c0 = cpu.getCurrentThreadCpuTime();
      long w0 = System.nanoTime();
      b.classifier.classify(b.graph, b.features, b.targets[q]);
      wallNanos[q] = System.nanoTime() - w0;
      cpuNanos[q] = cpu.getCurrentThreadCpuTime() - c0;
    }
    report("cpu ", cpuNanos);
    report("wall", wallNanos);
  }

  private static void report(String what, long[] nanos) {
    long[] sorted = nanos.clone();
    Arrays.sort(sorted);
    System.out.printf(
        Locale.ROOT,
        "%s ms per call over %d calls: p50 %.3f  p90 %.3f  p99 %.3f  max %.3f  mean %.3f%n",
        what,
        sorted.length,
        at(sorted, 0.50),
        at(sorted, 0.90),
        at(sorted, 0.99),
        sorted[sorted.length - 1] / 1e6,
        Arrays.stream(sorted).average().orElse(0) / 1e6);
  }

  private static double at(long[] sorted, double p) {
    return sorted[(int) Math.min(sorted.length - 1, Math.floor(p * sorted.length))] / 1e6;
  }
}
