package dev.heed.bench.kernel;

import com.sun.management.OperatingSystemMXBean;
import dev.heed.attention.AttentionKernel;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.dense.DenseAttentionKernelProvider;
import dev.heed.graph.CompletePattern;
import java.lang.management.ManagementFactory;
import java.util.Arrays;
import java.util.Locale;
import java.util.Random;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.factory.Nd4j;

/**
 * The dense kernel against its two matrix products, call by call in one JVM: full self-attention
 * over the complete pattern (8 heads × 64 dims, scaled dot-product scores unless {@code additive}
 * is asked for), then the two gemms per head of {@link DenseAttentionBenchmark#twoGemmsAlone} on
 * packed inputs of the same shape, alternating, each timed by wall clock and by the process's CPU
 * time (all its threads). Because the two alternate call by call, load from other work on a shared
 * machine falls on both alike, so the ratio of their medians holds up better than that of two JMH
 * forks minutes apart; the CPU time shows work that the wall clock hides under load (each call's
 * own threads' time, BLAS's included).
 *
 * <p>Prints one line: median wall and CPU milliseconds of each, their 10th percentiles, and the
 * ratios. Complements {@link DenseAttentionBenchmark}; it does not replace it.
 *
 * <p>Run: {@code OMP_WAIT_POLICY=PASSIVE OPENBLAS_THREAD_TIMEOUT=4 java --add-modules
 * jdk.incubator.vector -Dorg.bytedeco.javacpp.maxphysicalbytes=6g -cp
 * benchmarks/target/benchmarks.jar dev.heed.bench.kernel.DenseGemmRatio [n] [calls] [dot|additive]}
 * (defaults 4096, 15, dot). The process CPU time comes from the operating system in ticks (10 ms
 * here), so only medians over many calls mean anything.
 */
public final class DenseGemmRatio {

  private static final int HEADS = 8;
  private static final int DIM = 64;
  private static final int WARM_UP_CALLS = 5;

  private DenseGemmRatio() {}

  /**
   * Entry point.
   *
   * @param args optionally n, the timed calls, and the score ({@code dot} or {@code additive})
   */
  public static void main(String[] args) {
    int n = args.length > 0 ? Integer.parseInt(args[0]) : 4096;
    int calls = args.length > 1 ? Integer.parseInt(args[1]) : 15;
    boolean additive = args.length > 2 && args[2].equals("additive");
    OperatingSystemMXBean os = (OperatingSystemMXBean) ManagementFactory.getOperatingSystemMXBean();
    Random random = new Random(DenseAttentionBenchmark.SEED);
    HeadShape shape = new HeadShape(HEADS, additive ? 1 : DIM, DIM);
    ScoreFunction score =
        additive
            ? ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE)
            : ScoreFunction.scaledDotProduct();
    float[] q = DenseAttentionBenchmark.random(random, n * shape.keyWidth());
    float[] k = DenseAttentionBenchmark.random(random, n * shape.keyWidth());
    float[] v = DenseAttentionBenchmark.random(random, n * shape.valueWidth());
    float[] out = new float[v.length];
    AttentionKernel kernel =
        new DenseAttentionKernelProvider()
            .create(KernelOptions.defaults().withDenseMemoryBudgetBytes(512L << 20));
    INDArray[] packedQ = new INDArray[HEADS];
    INDArray[] packedK = new INDArray[HEADS];
    INDArray[] packedV = new INDArray[HEADS];
    for (int h = 0; h < HEADS; h++) {
      long[] packed = {n, DIM};
      packedQ[h] = Nd4j.create(DenseAttentionBenchmark.random(random, n * DIM), packed, 'c');
      packedK[h] = Nd4j.create(DenseAttentionBenchmark.random(random, n * DIM), packed, 'c');
      packedV[h] = Nd4j.create(DenseAttentionBenchmark.random(random, n * DIM), packed, 'c');
    }
    INDArray scores = Nd4j.create(DataType.FLOAT, new long[] {n, n}, 'c');
    INDArray product = Nd4j.create(DataType.FLOAT, new long[] {n, DIM}, 'c');
    double alpha = 1 / Math.sqrt(DIM);
    // wall and CPU of the kernel, wall and CPU of the gemms
    double[][] times = new double[4][calls];
    for (int c = -WARM_UP_CALLS; c < calls; c++) {
      long w0 = System.nanoTime();
      long c0 = os.getProcessCpuTime();
      kernel.attend(CompletePattern.of(n), score, shape, q, k, v, out, null);
      long w1 = System.nanoTime();
      long c1 = os.getProcessCpuTime();
      for (int h = 0; h < HEADS; h++) {
        Nd4j.gemm(packedQ[h], packedK[h], scores, false, true, alpha, 0.0);
        Nd4j.gemm(scores, packedV[h], product, false, false, 1.0, 0.0);
      }
      long w2 = System.nanoTime();
      long c2 = os.getProcessCpuTime();
      if (c >= 0) {
        times[0][c] = (w1 - w0) / 1e6;
        times[1][c] = (c1 - c0) / 1e6;
        times[2][c] = (w2 - w1) / 1e6;
        times[3][c] = (c2 - c1) / 1e6;
      }
    }
    double[] median = new double[4];
    double[] tenth = new double[4];
    for (int i = 0; i < 4; i++) {
      double[] sorted = times[i].clone();
      Arrays.sort(sorted);
      median[i] = sorted[calls / 2];
      tenth[i] = sorted[calls / 10];
    }
    System.out.printf(
        Locale.ROOT,
        "%s n=%d: kernel wall %.1f (p10 %.1f) cpu %.0f | two gemms wall %.1f (p10 %.1f) cpu %.0f"
            + " | wall ratio %.2f (p10 %.2f), cpu ratio %.2f%n",
        additive ? "additive" : "dot-product",
        n,
        median[0],
        tenth[0],
        median[1],
        median[2],
        tenth[2],
        median[3],
        median[0] / median[2],
        tenth[0] / tenth[2],
        median[1] / median[3]);
    for (INDArray[] arrays : new INDArray[][] {packedQ, packedK, packedV}) {
      for (INDArray a : arrays) {
        a.close();
      }
    }
    scores.close();
    product.close();
  }
}
