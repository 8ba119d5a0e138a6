package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import org.junit.jupiter.api.Test;

/**
 * The two ways a projection is computed (BLAS gemm for large products, plain Java for small ones)
 * both equal a float64 matrix product, over awkward sizes (common practice: a float32 dot product
 * of length d is accurate to about √d·1e-7 relative).
 */
class ModelMathTest {

  @Test
  void gemmAndJavaProjectionsMatchFloat64() {
    long seed = 4242;
    Random random = new Random(seed);
    int[][] sizes = {{1, 1, 1}, {3, 7, 5}, {65, 33, 17}, {130, 257, 9}};
    for (int[] s : sizes) {
      int n = s[0];
      int in = s[1];
      int out = s[2];
      float[] x = new float[n * in];
      float[] w = new float[in * out];
      float[] b = new float[out];
      for (int i = 0; i < x.length; i++) {
        x[i] = random.nextInt(5) == 0 ? 0f : (float) random.nextGaussian();
      }
      for (int i = 0; i < w.length; i++) {
        w[i] = (float) random.nextGaussian();
      }
      for (int i = 0; i < b.length; i++) {
        b[i] = (float) random.nextGaussian();
      }
      double[] expected = new double[n * out];
      for (int i = 0; i < n; i++) {
        for (int o = 0; o < out; o++) {
          double sum = b[o];
          for (int k = 0; k < in; k++) {
            sum += (double) x[i * in + k] * w[k * out + o];
          }
          expected[i * out + o] = sum;
        }
      }
      String where = n + "x" + in + "x" + out + " (seed " + seed + ")";
      double javaError =
          ReferenceAttention.relativeError(expected, ModelMath.projectInJava(x, n, in, w, out, b));
      double gemmError =
          ReferenceAttention.relativeError(
              expected, ModelMath.projectWithGemm(x, n, in, w, out, b));
      assertTrue(javaError < 1e-5, "java " + where + ": " + javaError);
      assertTrue(gemmError < 1e-5, "gemm " + where + ": " + gemmError);
    }
  }

  /** Many threads each running their own gemm projections get the single-thread results. */
  @Test
  void concurrentGemmProjectionsAreIdenticalToSequentialOnes() throws Exception {
    long seed = 4343;
    Random random = new Random(seed);
    int n = 70;
    int in = 40;
    int out = 24;
    float[] w = new float[in * out];
    for (int i = 0; i < w.length; i++) {
      w[i] = (float) random.nextGaussian();
    }
    float[][] inputs = new float[8][n * in];
    float[][] expected = new float[8][];
    for (int t = 0; t < inputs.length; t++) {
      for (int i = 0; i < inputs[t].length; i++) {
        inputs[t][i] = (float) random.nextGaussian();
      }
      expected[t] = ModelMath.projectWithGemm(inputs[t], n, in, w, out, null);
    }
    ExecutorService pool = Executors.newFixedThreadPool(16);
    try {
      List<Future<?>> futures = new ArrayList<>();
      for (int task = 0; task < 64; task++) {
        int which = task % inputs.length;
        futures.add(
            pool.submit(
                () ->
                    assertArrayEquals(
                        expected[which],
                        ModelMath.projectWithGemm(inputs[which], n, in, w, out, null),
                        "seed " + seed)));
      }
      for (Future<?> f : futures) {
        f.get();
      }
    } finally {
      pool.shutdownNow();
    }
  }
}
