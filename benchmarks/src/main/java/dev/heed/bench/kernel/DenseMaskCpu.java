package dev.heed.bench.kernel;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.lang.management.ManagementFactory;
import java.lang.management.ThreadMXBean;
import java.util.Arrays;
import java.util.Locale;
import java.util.SplittableRandom;

/**
 * What a CSR mask costs the dense path: one dense attention call (4 heads × 16 dims, additive and
 * scaled dot-product scores) over uniform random patterns of several densities and over the
 * complete pattern, which needs no mask, timed by the calling thread's CPU time with one kernel
 * thread and one BLAS thread (run with {@code OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1}, so every
 * step runs on the timed thread). The patterns alternate call by call, so a shared machine's load
 * falls on all of them alike; the dense path's cost should not depend on density, and the complete
 * pattern's time is the floor a masked call is held to.
 *
 * <p>Prints one line per score and n: the median CPU and wall milliseconds per call for each
 * density. Complements {@link DenseAttentionBenchmark}; it does not replace it.
 *
 * <p>Run: {@code OMP_WAIT_POLICY=PASSIVE OPENBLAS_NUM_THREADS=1 OMP_NUM_THREADS=1 java
 * --add-modules jdk.incubator.vector -cp benchmarks/target/benchmarks.jar
 * dev.heed.bench.kernel.DenseMaskCpu [calls at n=512] [calls at n=2048] [kernel threads]}. With
 * more than one kernel thread (and the process's BLAS threads) only the wall times mean anything:
 * the CPU time is the calling thread's.
 */
public final class DenseMaskCpu {

  private static final int[] NODES = {512, 2048};
  private static final double[] DENSITIES = {0.003, 0.1, 0.3, 1.0};

  private DenseMaskCpu() {}

  /**
   * Entry point.
   *
   * @param args optionally the timed calls per pattern at n = 512 and at n = 2048, and the kernel
   *     threads (default 1)
   */
  public static void main(String[] args) {
    int callsSmall = args.length > 0 ? Integer.parseInt(args[0]) : 40;
    int callsLarge = args.length > 1 ? Integer.parseInt(args[1]) : 12;
    int threads = args.length > 2 ? Integer.parseInt(args[2]) : 1;
    AttentionKernel dense =
        AttentionKernels.forPath(ComputePath.DENSE, KernelOptions.defaults().withThreads(threads));
    ThreadMXBean clock = ManagementFactory.getThreadMXBean();
    for (int n : NODES) {
      for (ScoreFunction score :
          new ScoreFunction[] {
            ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE),
            ScoreFunction.scaledDotProduct()
          }) {
        boolean additive = score instanceof ScoreFunction.Additive;
        HeadShape shape = new HeadShape(4, additive ? 1 : 16, 16);
        SplittableRandom random = new SplittableRandom(n * 31L + (additive ? 1 : 2));
        float[] q = gaussian(random, n * shape.keyWidth());
        float[] k = gaussian(random, n * shape.keyWidth());
        float[] v = gaussian(random, n * shape.valueWidth());
        float[] out = new float[v.length];
        AttentionPattern[] patterns = new AttentionPattern[DENSITIES.length];
        for (int d = 0; d < DENSITIES.length; d++) {
          patterns[d] =
              DENSITIES[d] >= 1 ? CompletePattern.of(n) : uniform(n, DENSITIES[d], random);
        }
        int calls = n <= 512 ? callsSmall : callsLarge;
        double[][] cpu = new double[DENSITIES.length][calls];
        double[][] wall = new double[DENSITIES.length][calls];
        for (int w = 0; w < 5; w++) {
          for (AttentionPattern p : patterns) {
            dense.attend(p, score, shape, q, k, v, out, null);
          }
        }
        for (int c = 0; c < calls; c++) {
          for (int d = 0; d < DENSITIES.length; d++) {
            long c0 = clock.getCurrentThreadCpuTime();
            long t0 = System.nanoTime();
            dense.attend(patterns[d], score, shape, q, k, v, out, null);
            cpu[d][c] = (clock.getCurrentThreadCpuTime() - c0) / 1e6;
            wall[d][c] = (System.nanoTime() - t0) / 1e6;
          }
        }
        StringBuilder line =
            new StringBuilder(
                String.format(Locale.ROOT, "%s n=%d:", additive ? "additive" : "dot-product", n));
        for (int d = 0; d < DENSITIES.length; d++) {
          line.append(
              String.format(
                  Locale.ROOT,
                  " %s cpu %.2f wall %.2f |",
                  DENSITIES[d] >= 1 ? "complete" : (DENSITIES[d] * 100) + "%",
                  median(cpu[d]),
                  median(wall[d])));
        }
        System.out.println(line);
      }
    }
  }

  private static float[] gaussian(SplittableRandom random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) (random.nextDouble() * 2 - 1);
    }
    return a;
  }

  /** Each row holds about density·n distinct sources drawn uniformly, sorted. */
  private static CsrGraph uniform(int n, double density, SplittableRandom random) {
    int perRow = Math.max(1, (int) Math.round(density * n));
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * perRow];
    boolean[] seen = new boolean[n];
    for (int i = 0; i < n; i++) {
      int at = i * perRow;
      for (int c = 0; c < perRow; ) {
        int j = random.nextInt(n);
        if (!seen[j]) {
          seen[j] = true;
          columns[at + c++] = j;
        }
      }
      Arrays.sort(columns, at, at + perRow);
      for (int c = 0; c < perRow; c++) {
        seen[columns[at + c]] = false;
      }
      offsets[i + 1] = at + perRow;
    }
    return CsrGraph.of(offsets, columns);
  }

  private static double median(double[] values) {
    double[] sorted = values.clone();
    Arrays.sort(sorted);
    return sorted[sorted.length / 2];
  }
}
