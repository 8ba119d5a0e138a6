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
 * none|degree|rcm|degree-rows|rcm-rows|hubs-rcm-rows|window-W-C-rows [threads=2] [warm-up=8]
 * [calls=15]}; {@code *-rows} runs the layout's renumbered rows as a plain graph, with inputs and
 * outputs in layout order. {@code hubs-rcm-rows} and {@code window-W-C-rows} are candidate orders
 * measured here, not offered by the library: the {@value #HUBS} most-read nodes first (their rows
 * together, about the second-level caches' size in bfloat16 rows), then every other node in reverse
 * Cuthill–McKee order; and the greedy window order of {@link #windowOrder} with window W and cap C.
 */
public final class CsrLayerCpu {

  /** Nodes placed first by {@code hubs-rcm-rows}: 16,384 rows of 192 bytes are 3 MiB. */
  static final int HUBS = 16_384;

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
    // window-W-C-rows: the greedy window order with window W and cap C
    String[] window = args[2].split("-");
    graph =
        switch (args[2].startsWith("window-") ? "window-rows" : args[2]) {
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
          case "hubs-rcm-rows" ->
              renumbered(
                  graph,
                  hubsFirst(
                      graph,
                      graph
                          .withLocalityOrder(LocalityOrder.REVERSE_CUTHILL_MCKEE)
                          .nodeLayout()
                          .orElseThrow()
                          .nodes()));
          case "window-rows" ->
              renumbered(
                  graph,
                  windowOrder(graph, Integer.parseInt(window[1]), Integer.parseInt(window[2])));
          default ->
              throw new IllegalArgumentException(
                  "order: none, degree, rcm, degree-rows, rcm-rows, hubs-rcm-rows or"
                      + " window-W-C-rows (for example window-5-64-rows)");
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

  /**
   * The {@link #HUBS} nodes read by the most rows (ties by id), most read first, then the others in
   * the given order.
   */
  private static int[] hubsFirst(CsrGraph graph, int[] order) {
    int n = graph.nodeCount();
    long[] byReads = new long[n];
    int[] reads = new int[n];
    for (int e = 0, end = graph.edgeCount(); e < end; e++) {
      reads[graph.column(e)]++;
    }
    for (int v = 0; v < n; v++) {
      byReads[v] = ((long) (Integer.MAX_VALUE - reads[v]) << 32) | v;
    }
    Arrays.sort(byReads);
    int hubs = Math.min(HUBS, n);
    boolean[] hub = new boolean[n];
    int[] result = new int[n];
    for (int p = 0; p < hubs; p++) {
      result[p] = (int) byReads[p];
      hub[result[p]] = true;
    }
    int p = hubs;
    for (int v : order) {
      if (!hub[v]) {
        result[p++] = v;
      }
    }
    return result;
  }

  /**
   * A candidate order measured here, not offered by the library: the greedy window ordering of Wei,
   * Yu, Lu and Lin ("Speedup Graph Processing by Graph Ordering", SIGMOD 2016), written from the
   * paper's description: the first node is the one with the most sources, and each next node is the
   * unplaced one with the highest score against the last {@code window} placed nodes, where a pair
   * scores one per source both rows read and one per entry between them. Sources read by more than
   * {@code cap} rows are left out of the shared-source count (our choice, to keep the cost near
   * O(E·cap): such rows stay cached wherever they sit). Scores live in buckets of doubly linked
   * nodes (O(1) per change, as the paper's priority queue).
   */
  static int[] windowOrder(CsrGraph graph, int window, int cap) {
    int n = graph.nodeCount();
    int[] readStart = new int[n + 1];
    int maxDegree = 0;
    for (int i = 0; i < n; i++) {
      maxDegree = Math.max(maxDegree, graph.rowEnd(i) - graph.rowStart(i));
      for (int e = graph.rowStart(i), end = graph.rowEnd(i); e < end; e++) {
        int j = graph.column(e);
        if (j != i) {
          readStart[j + 1]++;
        }
      }
    }
    for (int v = 0; v < n; v++) {
      readStart[v + 1] += readStart[v];
    }
    int[] readers = new int[readStart[n]];
    int[] fill = Arrays.copyOf(readStart, n);
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i), end = graph.rowEnd(i); e < end; e++) {
        int j = graph.column(e);
        if (j != i) {
          readers[fill[j]++] = i;
        }
      }
    }
    WindowHeap heap = new WindowHeap(n, window * (maxDegree + 2) + 1);
    int start = 0;
    for (int v = 1; v < n; v++) {
      if (graph.rowEnd(v) - graph.rowStart(v) > graph.rowEnd(start) - graph.rowStart(start)) {
        start = v;
      }
    }
    int[] order = new int[n];
    for (int p = 0; p < n; p++) {
      int v = p == 0 ? start : heap.popMax();
      if (p == 0) {
        heap.remove(v);
      }
      order[p] = v;
      windowScores(graph, readStart, readers, cap, v, 1, heap);
      if (p >= window) {
        windowScores(graph, readStart, readers, cap, order[p - window], -1, heap);
      }
    }
    return order;
  }

  private static void windowScores(
      CsrGraph graph, int[] readStart, int[] readers, int cap, int v, int delta, WindowHeap heap) {
    for (int e = graph.rowStart(v), end = graph.rowEnd(v); e < end; e++) {
      int u = graph.column(e);
      if (u == v) {
        continue;
      }
      heap.add(u, delta);
      if (readStart[u + 1] - readStart[u] <= cap) {
        for (int r = readStart[u], rEnd = readStart[u + 1]; r < rEnd; r++) {
          int x = readers[r];
          if (x != v) {
            heap.add(x, delta);
          }
        }
      }
    }
    for (int r = readStart[v], rEnd = readStart[v + 1]; r < rEnd; r++) {
      heap.add(readers[r], delta);
    }
  }

  /** Unplaced nodes in buckets by score, doubly linked: O(1) per change of one. */
  private static final class WindowHeap {
    final int[] score;
    final int[] next;
    final int[] prev;
    final int[] head;
    final boolean[] placed;
    int top;

    WindowHeap(int n, int maxScore) {
      score = new int[n];
      next = new int[n];
      prev = new int[n];
      head = new int[maxScore + 1];
      placed = new boolean[n];
      Arrays.fill(head, -1);
      for (int v = n - 1; v >= 0; v--) {
        link(v, 0);
      }
    }

    void link(int v, int s) {
      int h = head[s];
      next[v] = h;
      prev[v] = -1;
      if (h >= 0) {
        prev[h] = v;
      }
      head[s] = v;
    }

    void unlink(int v) {
      int s = score[v];
      if (prev[v] >= 0) {
        next[prev[v]] = next[v];
      } else {
        head[s] = next[v];
      }
      if (next[v] >= 0) {
        prev[next[v]] = prev[v];
      }
    }

    void add(int v, int delta) {
      if (placed[v]) {
        return;
      }
      unlink(v);
      int s = score[v] + delta;
      score[v] = s;
      link(v, s);
      if (s > top) {
        top = s;
      }
    }

    void remove(int v) {
      unlink(v);
      placed[v] = true;
    }

    int popMax() {
      while (head[top] < 0) {
        top--;
      }
      int v = head[top];
      remove(v);
      return v;
    }
  }

  /**
   * The graph's rows renumbered: position p holds node {@code order[p]}, sources renumbered too.
   */
  private static CsrGraph renumbered(CsrGraph graph, int[] order) {
    int n = graph.nodeCount();
    int[] position = new int[n];
    for (int p = 0; p < n; p++) {
      position[order[p]] = p;
    }
    int[] offsets = new int[n + 1];
    int[] columns = new int[graph.edgeCount()];
    for (int p = 0; p < n; p++) {
      int v = order[p];
      int start = graph.rowStart(v);
      int degree = graph.rowEnd(v) - start;
      for (int t = 0; t < degree; t++) {
        columns[offsets[p] + t] = position[graph.column(start + t)];
      }
      Arrays.sort(columns, offsets[p], offsets[p] + degree);
      offsets[p + 1] = offsets[p] + degree;
    }
    return CsrGraph.of(offsets, columns);
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
