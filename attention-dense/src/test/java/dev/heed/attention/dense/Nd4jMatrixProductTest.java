package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.internal.MatrixProduct;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.ServiceLoader;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import org.junit.jupiter.api.Test;

/**
 * The BLAS projection equals a float64 matrix product over awkward sizes (common practice: a
 * float32 dot product of length d is accurate to about √d·1e-7 relative), from many threads at
 * once, and is what the core's layers find on the class path.
 */
class Nd4jMatrixProductTest {

  private final MatrixProduct product = new Nd4jMatrixProduct();

  @Test
  void matchesFloat64() {
    long seed = 4242;
    Random random = new Random(seed);
    int[][] sizes = {{1, 1, 1}, {3, 7, 5}, {65, 33, 17}, {130, 257, 9}};
    for (int[] s : sizes) {
      int n = s[0];
      int in = s[1];
      int out = s[2];
      float[] x = gaussian(random, n * in);
      float[] w = gaussian(random, in * out);
      double[] expected = new double[n * out];
      for (int i = 0; i < n; i++) {
        for (int o = 0; o < out; o++) {
          double sum = 0;
          for (int k = 0; k < in; k++) {
            sum += (double) x[i * in + k] * w[k * out + o];
          }
          expected[i * out + o] = sum;
        }
      }
      double error = ReferenceAttention.relativeError(expected, product.multiply(x, n, in, w, out));
      assertTrue(error < 1e-5, n + "x" + in + "x" + out + " (seed " + seed + "): " + error);
    }
  }

  /** Many threads each running their own products get the single-thread results. */
  @Test
  void concurrentProductsAreIdenticalToSequentialOnes() throws Exception {
    long seed = 4343;
    Random random = new Random(seed);
    int n = 70;
    int in = 40;
    int out = 24;
    float[] w = gaussian(random, in * out);
    float[][] inputs = new float[8][];
    float[][] expected = new float[8][];
    for (int t = 0; t < inputs.length; t++) {
      inputs[t] = gaussian(random, n * in);
      expected[t] = product.multiply(inputs[t], n, in, w, out);
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
                        product.multiply(inputs[which], n, in, w, out),
                        "seed " + seed)));
      }
      for (Future<?> f : futures) {
        f.get();
      }
    } finally {
      pool.shutdownNow();
    }
  }

  @Test
  void isFoundThroughTheServiceLoader() {
    List<String> found = new ArrayList<>();
    for (MatrixProduct p : ServiceLoader.load(MatrixProduct.class)) {
      found.add(p.getClass().getName());
    }
    assertEquals(List.of(Nd4jMatrixProduct.class.getName()), found);
  }

  private static float[] gaussian(Random random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) random.nextGaussian();
    }
    return a;
  }
}
