package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The plain-Java projection (the only one on the core's class path, which has no plug-in) equals a
 * float64 matrix product, over awkward sizes (common practice: a float32 dot product of length d is
 * accurate to about √d·1e-7 relative).
 */
class ModelMathTest {

  @Test
  void javaProjectionsMatchFloat64() {
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
      double projectError =
          ReferenceAttention.relativeError(expected, ModelMath.project(x, n, in, w, out, b));
      assertTrue(javaError < 1e-5, "java " + where + ": " + javaError);
      assertTrue(projectError < 1e-5, "project " + where + ": " + projectError);
    }
  }

  @Test
  void narrowOrShortProductsNeverReachThePlugIn() {
    // enough multiply-adds, but a narrow side (a first layer over a few features, a last layer
    // over a few classes): stays in Java
    assertTrue(50_000L * 6 * 64 >= ModelMath.GEMM_MIN_MULTIPLY_ADDS);
    assertFalse(ModelMath.worthPlugIn(50_000, 6, 64));
    assertFalse(ModelMath.worthPlugIn(50_000, 64, 3));
    assertFalse(ModelMath.worthPlugIn(50_000, ModelMath.GEMM_MIN_WIDTH - 1, 1024));
    assertFalse(ModelMath.worthPlugIn(50_000, 1024, ModelMath.GEMM_MIN_WIDTH - 1));
    // too few rows, or too few multiply-adds
    assertFalse(ModelMath.worthPlugIn(ModelMath.GEMM_MIN_ROWS - 1, 4096, 4096));
    assertFalse(ModelMath.worthPlugIn(1024, 64, 64));
    // large on every count
    assertTrue(ModelMath.worthPlugIn(50_000, ModelMath.GEMM_MIN_WIDTH, ModelMath.GEMM_MIN_WIDTH));
  }

  @Test
  void theCoreHasNoPluggedInProduct() {
    // the core must run without a native library: only attention-dense plugs BLAS in
    assertNull(ModelMath.LargeProducts.PLUGGED_IN);
  }
}
