package dev.heed.bench.roofline;

import java.util.SplittableRandom;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.factory.Nd4j;

/**
 * Measures the float32 matrix-product rate of this machine through ND4J, in GFLOP/s: the ceiling of
 * the dense attention path, which spends its time in such products.
 *
 * <p>What it measures: {@code C = A·B} for square {@code size × size} float32 matrices of seeded
 * random values, with {@code Nd4j.gemm(a, b, c, false, false, 1, 0)} into a preallocated {@code c}
 * (ND4J's {@code mmul} without an output array allocates and copies, and runs slower); {@code
 * 2·size³} flops per product. Two untimed products come first; the result is the median (with min
 * and max) of the timed ones, each timed with {@link System#nanoTime()}. ND4J and OpenBLAS use the
 * thread count they were started with ({@code OMP_NUM_THREADS}, default all cores), the same as the
 * dense kernel.
 *
 * <p>Thread safety: stateless; each call allocates its own arrays (off-heap, freed by the garbage
 * collector).
 */
public final class GemmProbe {

  private GemmProbe() {}

  /**
   * One GEMM measurement.
   *
   * @param size the matrix size
   * @param gflops median GFLOP/s
   * @param minGflops slowest trial
   * @param maxGflops fastest trial
   * @param blasThreads the BLAS thread count in force
   */
  public record Measurement(
      int size, double gflops, double minGflops, double maxGflops, int blasThreads) {}

  /**
   * Measures the rate.
   *
   * @param size matrix size, at least 16 and at most 8192
   * @param trials timed products, at least 1
   * @param seed seed for the matrix values
   * @return the measurement
   * @throws IllegalArgumentException if an argument is out of range
   */
  public static Measurement measure(int size, int trials, long seed) {
    if (size < 16 || size > 8192 || trials < 1) {
      throw new IllegalArgumentException(
          "size must be in 16..8192 and trials at least 1, got size="
              + size
              + ", trials="
              + trials);
    }
    INDArray a = random(size, seed);
    INDArray b = random(size, seed + 1);
    INDArray c = Nd4j.createUninitialized(DataType.FLOAT, new long[] {size, size}, 'c');
    double flops = 2.0 * size * size * (double) size;
    double[] rates = new double[trials];
    double sink = 0;
    for (int t = -2; t < trials; t++) {
      long start = System.nanoTime();
      Nd4j.gemm(a, b, c, false, false, 1.0, 0.0);
      long nanos = System.nanoTime() - start;
      sink += c.getFloat(0L);
      if (t >= 0) {
        rates[t] = flops / nanos;
      }
    }
    if (Double.isNaN(sink)) {
      throw new AssertionError("gemm produced NaN from finite data");
    }
    int threads = Nd4j.factory().blas().getMaxThreads();
    return new Measurement(
        size, Stats.median(rates), Stats.quantile(rates, 0), Stats.quantile(rates, 1), threads);
  }

  private static INDArray random(int size, long seed) {
    SplittableRandom random = new SplittableRandom(seed);
    float[] data = new float[size * size];
    for (int i = 0; i < data.length; i++) {
      data[i] = (float) (random.nextDouble() * 2 - 1);
    }
    return Nd4j.create(data, new long[] {size, size}, 'c');
  }
}
