package dev.heed.bench.kernel;

import dev.heed.attention.internal.RowProjector;
import dev.heed.attention.internal.RowProjectors;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.Warmup;

/**
 * The layers' small projections in Java, one thread: {@code y = x · w} for {@code rows} rows of
 * {@code in} inputs and {@code out} outputs, the first layer's work on a targeted query (a median
 * receptive field of an R-MAT scale-20 graph reads about 1,300 nodes; 64 features; 8 heads × 8
 * dims). {@code form}: {@code loop}, the straightforward i-k-j loop the JIT vectorises (one load
 * and one store of y per multiply-add); {@code plain}, {@link RowProjector#multiplyAddPlain} (four
 * rows per weight load); {@code preferred}, {@link RowProjectors#preferred()} (the Vector API form
 * when the fork reads {@code jdk.incubator.vector}, which this one does). Multiply-adds per call:
 * rows·in·out; divide by the time for the rate and compare with the FMA peak of one core.
 */
@State(Scope.Thread)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MICROSECONDS)
@Fork(
    value = 1,
    jvmArgsAppend = {"--add-modules", "jdk.incubator.vector"})
@Warmup(iterations = 3, time = 1)
@Measurement(iterations = 5, time = 1)
public class ProjectionBenchmark {

  /** Rows projected per call. */
  @Param({"1334"})
  public int rows;

  /** Inputs per row. */
  @Param({"64"})
  public int in;

  /** Outputs per row. */
  @Param({"64"})
  public int out;

  /** Which implementation (see the class comment). */
  @Param({"loop", "plain", "preferred"})
  public String form;

  private float[] x;
  private float[] w;
  private float[] y;
  private RowProjector projector;

  /** Seeded Gaussian operands. */
  @Setup
  public void setUp() {
    SplittableRandom random = new SplittableRandom(20261204);
    x = gaussian(random, rows * in);
    w = gaussian(random, in * out);
    y = new float[rows * out];
    switch (form) {
      case "loop" -> projector = ProjectionBenchmark::loop;
      case "plain" -> projector = RowProjectors.plain();
      case "preferred" -> projector = RowProjectors.preferred();
      default -> throw new IllegalArgumentException("unknown form " + form);
    }
  }

  /**
   * One projection.
   *
   * @return the output, so that the work is not eliminated
   */
  @Benchmark
  public float[] project() {
    java.util.Arrays.fill(y, 0f);
    projector.multiplyAdd(x, rows, in, w, out, y);
    return y;
  }

  private static void loop(float[] x, int n, int in, float[] w, int out, float[] y) {
    for (int i = 0; i < n; i++) {
      for (int k = 0; k < in; k++) {
        float a = x[i * in + k];
        for (int j = 0; j < out; j++) {
          y[i * out + j] += a * w[k * out + j];
        }
      }
    }
  }

  private static float[] gaussian(SplittableRandom random, int length) {
    float[] values = new float[length];
    for (int i = 0; i < length; i++) {
      double u = 1.0 - random.nextDouble();
      double v = random.nextDouble();
      values[i] = (float) (Math.sqrt(-2 * Math.log(u)) * Math.cos(2 * Math.PI * v));
    }
    return values;
  }
}
