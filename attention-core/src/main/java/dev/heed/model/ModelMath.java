package dev.heed.model;

import dev.heed.attention.internal.MatrixProduct;
import dev.heed.attention.internal.RowProjectors;
import java.util.Arrays;
import java.util.ServiceLoader;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/** Dense helpers for the layers. Internal: arguments are checked by callers. */
final class ModelMath {

  private static final Logger LOG = LoggerFactory.getLogger(ModelMath.class);

  /**
   * Products with at least this many multiply-adds (n·in·out) and at least {@link #GEMM_MIN_ROWS}
   * rows go to the plugged-in {@link MatrixProduct} (BLAS, when {@code attention-dense} is on the
   * class path); smaller ones stay in Java, where an ND4J call's fixed cost of 7-60 µs would
   * dominate (measured). The threshold is a round guess, not a calibration.
   */
  static final long GEMM_MIN_MULTIPLY_ADDS = 1L << 23;

  /** Fewest rows sent to BLAS: below this, copying the weights costs more than it saves. */
  static final int GEMM_MIN_ROWS = 64;

  /**
   * Fewest columns of x (in) and of w (out) sent to BLAS. With a narrow side, the product is a
   * streaming loop bound by memory, so BLAS gains little (its blocking needs both sides wide),
   * while the first call would pay ND4J's one-off start-up (native libraries and over 800 classes;
   * 1-2 s on the reference machine, measured with {@code -Xlog:class+load}). This keeps narrow
   * layers, such as the demo model's 6 input features and 3 classes, off ND4J. A round guess, not a
   * calibration.
   */
  static final int GEMM_MIN_WIDTH = 32;

  private ModelMath() {}

  /**
   * {@code y = x · w (+ bias)}: x is n × in (x may hold more rows; only the first n are read), w is
   * in × out, y is n × out, all row-major. O(n·in·out). Large products use the plugged-in {@link
   * MatrixProduct} if there is one, small ones (and all, without one) {@link #projectInJava}.
   */
  static float[] project(float[] x, int n, int in, float[] w, int out, float[] bias) {
    if (worthPlugIn(n, in, out)) {
      MatrixProduct fast = LargeProducts.PLUGGED_IN; // first use: the ServiceLoader lookup
      if (fast != null) {
        return projectWith(fast, x, n, in, w, out, bias);
      }
    }
    return projectInJava(x, n, in, w, out, bias);
  }

  /**
   * Whether an n × in by in × out product is large enough for the plugged-in {@link MatrixProduct}
   * (see {@link #GEMM_MIN_MULTIPLY_ADDS}, {@link #GEMM_MIN_ROWS}, {@link #GEMM_MIN_WIDTH}). Smaller
   * products never look the plug-in up, so a model made of them never loads it.
   */
  static boolean worthPlugIn(int n, int in, int out) {
    return n >= GEMM_MIN_ROWS
        && in >= GEMM_MIN_WIDTH
        && out >= GEMM_MIN_WIDTH
        && (long) n * in * out >= GEMM_MIN_MULTIPLY_ADDS;
  }

  /** The product with a plugged-in implementation, then the bias. */
  static float[] projectWith(
      MatrixProduct product, float[] x, int n, int in, float[] w, int out, float[] bias) {
    float[] rows = x.length == n * in ? x : Arrays.copyOf(x, n * in);
    float[] y = product.multiply(rows, n, in, w, out);
    assert y.length == n * out;
    if (bias != null) {
      addRowBias(y, out, bias);
    }
    return y;
  }

  /** The plugged-in product, looked up once per JVM (holder idiom), or null. */
  static final class LargeProducts {
    static final MatrixProduct PLUGGED_IN = find();

    private LargeProducts() {}

    private static MatrixProduct find() {
      for (MatrixProduct product :
          ServiceLoader.load(MatrixProduct.class, ModelMath.class.getClassLoader())) {
        LOG.debug("Large projections: {}", product.describe());
        return product;
      }
      LOG.debug("Large projections: plain Java (no attention-dense on the class path)");
      return null;
    }
  }

  /**
   * The product in Java: the bias (or zeros), then {@link RowProjectors#preferred()} (the Vector
   * API when the JVM reads it, else plain Java).
   */
  static float[] projectInJava(float[] x, int n, int in, float[] w, int out, float[] bias) {
    assert x.length >= (long) n * in && w.length == (long) in * out;
    float[] y = new float[n * out];
    if (bias != null) {
      for (int yRow = 0; yRow < y.length; yRow += out) {
        System.arraycopy(bias, 0, y, yRow, out);
      }
    }
    RowProjectors.preferred().multiplyAdd(x, n, in, w, out, y);
    return y;
  }

  /** {@code a += b}, element-wise over a's length (b may be longer: its leading rows are added). */
  static void addInPlace(float[] a, float[] b) {
    assert a.length <= b.length;
    for (int i = 0; i < a.length; i++) {
      a[i] += b[i];
    }
  }

  /** Returns {@code x} if it has {@code length} elements, else a copy zero-padded to it. */
  static float[] padTo(float[] x, int length) {
    return x.length == length ? x : Arrays.copyOf(x, length);
  }

  /** Adds {@code bias} (length width) to every row of the n × width array {@code a}. */
  static void addRowBias(float[] a, int width, float[] bias) {
    for (int start = 0; start < a.length; start += width) {
      for (int j = 0; j < width; j++) {
        a[start + j] += bias[j];
      }
    }
  }

  /**
   * Layer normalisation of each row of the n × width array (Ba, Kiros, Hinton 2016, eq. 4: mean and
   * biased variance over the row's features, then gain and bias), returning a new array; statistics
   * in float64.
   */
  static float[] layerNorm(float[] x, int width, float[] scale, float[] shift, double epsilon) {
    float[] y = new float[x.length];
    for (int start = 0; start < x.length; start += width) {
      double mean = 0;
      for (int j = 0; j < width; j++) {
        mean += x[start + j];
      }
      mean /= width;
      double var = 0;
      for (int j = 0; j < width; j++) {
        double d = x[start + j] - mean;
        var += d * d;
      }
      var /= width;
      double inv = 1.0 / Math.sqrt(var + epsilon);
      for (int j = 0; j < width; j++) {
        y[start + j] = (float) ((x[start + j] - mean) * inv * scale[j] + shift[j]);
      }
    }
    return y;
  }

  /** Softmax of each row of the n × width array in place, row maximum subtracted first. */
  static void softmaxRows(float[] x, int width) {
    for (int start = 0; start < x.length; start += width) {
      float max = Float.NEGATIVE_INFINITY;
      for (int j = 0; j < width; j++) {
        max = Math.max(max, x[start + j]);
      }
      double sum = 0;
      for (int j = 0; j < width; j++) {
        double e = Math.exp(x[start + j] - max);
        x[start + j] = (float) e;
        sum += e;
      }
      float inv = (float) (1.0 / sum);
      for (int j = 0; j < width; j++) {
        x[start + j] *= inv;
      }
    }
  }
}
