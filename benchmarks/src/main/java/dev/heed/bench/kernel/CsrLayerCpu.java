package dev.heed.bench.kernel;

import dev.heed.attention.HeadShape;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ScoreFunction;
import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.LocalityOrder;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.sparse.internal.CsrAttentionKernel;
import dev.heed.sparse.internal.CsrKernelVariant;
import java.lang.management.ManagementFactory;
import java.util.Arrays;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * One sparse GAT layer (additive scores, 8 heads × 8 dims, no weights) timed by the process's CPU
 * time as well as wall time, per call: on a machine shared with other work, CPU time says what a
 * call costs and wall time what the machine allowed. One variant per JVM (node-row precision and
 * locality order), so a script alternates JVMs for an A/B ({@code benchmarks/layer-cpu-ab.sh}).
 * Complements {@link CsrAttentionBenchmark}; it does not replace it.
 *
 * <p>Prints one line: the graph, the variant, the order's own wall and CPU time (once, before the
 * calls), the median CPU and wall milliseconds per call over the timed calls (after {@code warm-up}
 * untimed ones), and the mean CPU milliseconds per call (the process CPU clock ticks in 10 ms here,
 * so short calls need the mean over many).
 *
 * <p>Run: {@code java --add-modules jdk.incubator.vector -Xmx4g -XX:+UseTransparentHugePages -cp
 * benchmarks/target/benchmarks.jar dev.heed.bench.kernel.CsrLayerCpu rmat|demo float32|bfloat16
 * none|degree|rcm|degree-rows|rcm-rows [threads=2] [warm-up=8] [calls=15]}; {@code *-rows} runs the
 * layout's renumbered rows as a plain graph, with inputs and outputs in layout order.
 */
public final class CsrLayerCpu {

  private CsrLayerCpu() {}

  /**
   * Entry point.
   *
   * @param args graph, node rows, order, and optionally threads, warm-up calls and timed calls
   */
  public static void main(String[] args) {
    if (args.length < 3) {
      throw new IllegalArgumentException(
          "usage: CsrLayerCpu rmat|demo float32|bfloat16 none|degree|rcm [threads] [warm-up]"
              + " [calls]");
    }
    String graphName = args[0];
    NodeRowPrecision rows =
        switch (args[1]) {
          case "float32" -> NodeRowPrecision.FLOAT32;
          case "bfloat16" -> NodeRowPrecision.BFLOAT16;
          default -> throw new IllegalArgumentException("node rows: float32 or bfloat16");
        };
    int threads = args.length > 3 ? Integer.parseInt(args[3]) : 2;
    int warmUp = args.length > 4 ? Integer.parseInt(args[4]) : 8;
    int calls = args.length > 5 ? Integer.parseInt(args[5]) : 15;
    CsrGraph graph =
        switch (graphName) {
          case "rmat" ->
              RmatGenerator.withScale(20)
                  .edgeFactor(16)
                  .seed(20260401L)
                  .generateEdges()
                  .selfLoops(SelfLoopPolicy.ADD)
                  .duplicates(DuplicatePolicy.MERGE)
                  .build();
          case "demo" -> DemoGraph.build(PaymentsNetworkGenerator.bundledDemo().generate());
          default -> throw new IllegalArgumentException("graph: rmat or demo");
        };
    com.sun.management.OperatingSystemMXBean os =
        (com.sun.management.OperatingSystemMXBean) ManagementFactory.getOperatingSystemMXBean();
    long cpu0 = os.getProcessCpuTime();
    long wall0 = System.nanoTime();
    graph =
        switch (args[2]) {
          case "none" -> graph;
          case "degree" -> graph.withLocalityOrder(LocalityOrder.DEGREE);
          case "rcm" -> graph.withLocalityOrder(LocalityOrder.REVERSE_CUTHILL_MCKEE);
          // the renumbered rows as a graph of their own: inputs and outputs in layout order, as
          // when the caller's arrays are already in that order (no scattered reads and writes)
          case "degree-rows" ->
              graph.withLocalityOrder(LocalityOrder.DEGREE).nodeLayout().orElseThrow().rows();
          case "rcm-rows" ->
              graph
                  .withLocalityOrder(LocalityOrder.REVERSE_CUTHILL_MCKEE)
                  .nodeLayout()
                  .orElseThrow()
                  .rows();
          default ->
              throw new IllegalArgumentException(
                  "order: none, degree, rcm, degree-rows or rcm-rows");
        };
    double orderCpuMs = (os.getProcessCpuTime() - cpu0) / 1e6;
    double orderWallMs = (System.nanoTime() - wall0) / 1e6;
    int n = graph.nodeCount();
    HeadShape shape = new HeadShape(8, 1, 8);
    ScoreFunction gat = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
    SplittableRandom random = new SplittableRandom(20260401L);
    float[] q = uniform(random, n * 8);
    float[] k = uniform(random, n * 8);
    float[] v = uniform(random, n * 64);
    float[] out = new float[n * 64];
    CsrAttentionKernel kernel =
        CsrAttentionKernel.create(threads, CsrKernelVariant.DEFAULT.withNodeRows(rows));
    double[] cpuMs = new double[calls];
    double[] wallMs = new double[calls];
    double sink = 0;
    for (int c = 0; c < warmUp + calls; c++) {
      long cpu = os.getProcessCpuTime();
      long wall = System.nanoTime();
      kernel.attend(graph, gat, shape, q, k, v, out, null);
      if (c >= warmUp) {
        cpuMs[c - warmUp] = (os.getProcessCpuTime() - cpu) / 1e6;
        wallMs[c - warmUp] = (System.nanoTime() - wall) / 1e6;
      }
      sink += out[c % out.length];
    }
    System.out.printf(
        Locale.ROOT,
        "%s n=%d E=%d rows=%s order=%s threads=%d order-wall-ms=%.1f order-cpu-ms=%.1f"
            + " cpu-ms-median=%.1f wall-ms-median=%.1f cpu-ms-mean=%.2f load=%.2f (sink %.3g)%n",
        graphName,
        n,
        graph.entryCount(),
        args[1],
        args[2],
        threads,
        orderWallMs,
        orderCpuMs,
        median(cpuMs),
        median(wallMs),
        Arrays.stream(cpuMs).sum() / calls,
        os.getSystemLoadAverage(),
        sink);
  }

  private static double median(double[] a) {
    double[] s = a.clone();
    Arrays.sort(s);
    return s.length % 2 == 1 ? s[s.length / 2] : (s[s.length / 2 - 1] + s[s.length / 2]) / 2;
  }

  private static float[] uniform(SplittableRandom random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) (2 * random.nextDouble() - 1);
    }
    return a;
  }
}
