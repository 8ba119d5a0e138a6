package dev.heed.examples;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.SplittableRandom;

/**
 * Full self-attention over a set of items versus graph attention over a sparse graph on the same
 * items, with timings.
 *
 * <p>Scenario (invented): a catalogue of items, each with a query, key and value vector per head.
 * Full self-attention lets every item attend to every other item: attention over the complete
 * pattern, n² pairs. Restricting each item to a few related items (here: 16 random "co-viewed"
 * items plus itself) is attention over a sparse graph, whose cost grows with its edges instead.
 *
 * <p>Run: {@code java --add-modules jdk.incubator.vector -cp ...
 * dev.heed.examples.SelfAttentionVersusGraphAttention [items]}
 */
public final class SelfAttentionVersusGraphAttention {

  private SelfAttentionVersusGraphAttention() {}

  /**
   * Runs the comparison.
   *
   * @param args optional: the number of items (default 4096)
   */
  public static void main(String[] args) {
    int n = args.length > 0 ? Integer.parseInt(args[0]) : 4096;
    int related = 16;
    HeadShape shape = new HeadShape(4, 32, 32);
    SplittableRandom random = new SplittableRandom(42);
    float[] q = randomArray(n * shape.keyWidth(), random);
    float[] k = randomArray(n * shape.keyWidth(), random);
    float[] v = randomArray(n * shape.valueWidth(), random);
    ScoreFunction score = ScoreFunction.scaledDotProduct();
    KernelOptions options = KernelOptions.defaults();
    AttentionKernel dense = AttentionKernels.forPath(ComputePath.DENSE, options);
    AttentionKernel sparse = AttentionKernels.forPath(ComputePath.SPARSE, options);

    // 1. Full self-attention: attention over the complete pattern, on the dense path.
    CompletePattern everyPair = CompletePattern.of(n);
    float[] fullOut = new float[n * shape.valueWidth()];
    double fullMs = timeMs(() -> dense.attend(everyPair, score, shape, q, k, v, fullOut, null));

    // 2. The same attention restricted to a sparse graph, on the sparse path.
    CsrGraph coViewed = randomGraph(n, related, random);
    float[] graphOut = new float[n * shape.valueWidth()];
    double graphMs = timeMs(() -> sparse.attend(coViewed, score, shape, q, k, v, graphOut, null));

    System.out.printf("items: %d, heads: %d x %d dims%n", n, shape.heads(), shape.keyDim());
    System.out.printf(
        "full self-attention  (%,d pairs, %s): %8.1f ms%n",
        everyPair.entryCount(), dense.describe(), fullMs);
    System.out.printf(
        "graph attention      (%,d pairs, %s): %8.1f ms%n",
        coViewed.entryCount(), sparse.describe(), graphMs);

    // 3. Self-attention IS graph attention over the complete graph: the sparse kernel over the
    //    complete pattern gives the dense kernel's answer.
    float[] sparseOverEveryPair = new float[n * shape.valueWidth()];
    sparse.attend(everyPair, score, shape, q, k, v, sparseOverEveryPair, null);
    System.out.printf(
        "largest difference, sparse vs dense over the complete pattern: %.2e%n",
        maxAbsDifference(fullOut, sparseOverEveryPair));
  }

  private static double timeMs(Runnable work) {
    work.run(); // warm up once (JIT, native library loading)
    long start = System.nanoTime();
    work.run();
    return (System.nanoTime() - start) / 1e6;
  }

  private static CsrGraph randomGraph(int n, int related, SplittableRandom random) {
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * (related + 1)];
    int e = 0;
    int[] row = new int[related + 1];
    for (int i = 0; i < n; i++) {
      int size = 0;
      row[size++] = i;
      while (size < Math.min(related + 1, n)) {
        int j = random.nextInt(n);
        boolean seen = false;
        for (int t = 0; t < size; t++) {
          seen |= row[t] == j;
        }
        if (!seen) {
          row[size++] = j;
        }
      }
      Arrays.sort(row, 0, size);
      System.arraycopy(row, 0, columns, e, size);
      e += size;
      offsets[i + 1] = e;
    }
    return CsrGraph.of(offsets, Arrays.copyOf(columns, e));
  }

  private static float[] randomArray(int length, SplittableRandom random) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) random.nextGaussian();
    }
    return a;
  }

  private static double maxAbsDifference(float[] a, float[] b) {
    double max = 0;
    for (int i = 0; i < a.length; i++) {
      max = Math.max(max, Math.abs(a[i] - b[i]));
    }
    return max;
  }
}
