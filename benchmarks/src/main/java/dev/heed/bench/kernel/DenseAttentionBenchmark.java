package dev.heed.bench.kernel;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.dense.DenseAttentionKernelProvider;
import dev.heed.graph.CompletePattern;
import java.util.Random;
import java.util.concurrent.TimeUnit;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.api.ops.impl.transforms.custom.DotProductAttention;
import org.nd4j.linalg.api.ops.impl.transforms.custom.MultiHeadDotProductAttention;
import org.nd4j.linalg.factory.Nd4j;
import org.openjdk.jmh.annotations.Benchmark;
import org.openjdk.jmh.annotations.BenchmarkMode;
import org.openjdk.jmh.annotations.Fork;
import org.openjdk.jmh.annotations.Level;
import org.openjdk.jmh.annotations.Measurement;
import org.openjdk.jmh.annotations.Mode;
import org.openjdk.jmh.annotations.OutputTimeUnit;
import org.openjdk.jmh.annotations.Param;
import org.openjdk.jmh.annotations.Scope;
import org.openjdk.jmh.annotations.Setup;
import org.openjdk.jmh.annotations.State;
import org.openjdk.jmh.annotations.TearDown;
import org.openjdk.jmh.annotations.Warmup;

/**
 * Full self-attention on the dense path, against the two matrix products it cannot avoid and
 * against ND4J's own dot-product attention op on the same input.
 *
 * <ul>
 *   <li>{@code denseKernel}: {@code attend} over the complete pattern on n nodes, H heads of width
 *       d, Heed's node-major head-contiguous arrays in and out (repacking included), no weights.
 *   <li>{@code sparseKernel}: the sparse (CSR) path over the same complete pattern and inputs, on
 *       all cores (its cost grows with the n² entries, as the dense path's does).
 *   <li>{@code twoGemmsAlone}: per head, {@code S = Q_h·K_hᵀ} ({@code n×n}) and {@code O = S·V_h},
 *       each one {@code Nd4j.gemm} into a preallocated array, inputs already packed per head: the
 *       floor that the target "within 1.5× of its two matrix products" is measured against
 *       (2·2·n²·d flops per head). Does not depend on the score function.
 *   <li>{@code denseKernelWithProjections}, {@code sparseKernelWithProjections} and {@code
 *       nd4jMultiHeadAttention}: a whole multi-head self-attention with its four projections
 *       ({@code H·d × H·d} each), Heed's dense or sparse path with ND4J gemms around it against
 *       ND4J's {@code MultiHeadDotProductAttention} op on the same features and weights (the setup
 *       checks that the dense path and ND4J's op give the same output).
 *   <li>{@code nd4jDotProductAttention}: ND4J's {@code DotProductAttention} op (scaled), heads as
 *       the batch: q, k, v {@code [H, d, n]} prepared in setup (so ND4J pays no layout conversion,
 *       unlike {@code denseKernel}); it allocates its output, closed each time.
 * </ul>
 *
 * <p>Run: {@code OMP_WAIT_POLICY=PASSIVE java -jar benchmarks/target/benchmarks.jar
 * DenseAttentionBenchmark} (the forks inherit the environment; the {@code heed} launcher sets the
 * same policy, and without it ND4J's idle OpenMP threads spin on the cores the Java code needs).
 * Inputs are seeded; results are returned to JMH. Forked JVMs read the Vector API and cap ND4J's
 * off-heap memory; {@code -p softmax=vector,nd4j} compares the kernel's two exponential routes.
 */
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
@Fork(
    value = 2,
    jvmArgsAppend = {
      "--add-modules",
      "jdk.incubator.vector",
      "-Xmx2g",
      "-Dorg.bytedeco.javacpp.maxphysicalbytes=6g",
      "-Dorg.bytedeco.javacpp.maxbytes=3g",
      "-Dorg.nd4j.log.initialization=false"
    })
public class DenseAttentionBenchmark {

  /** Seed for every input. */
  static final long SEED = 20_240_401L;

  /** The shapes every state sweeps. */
  @State(Scope.Benchmark)
  public static class Shape {
    /** Nodes (sequence length). */
    @Param({"1024", "4096"})
    public int n;

    /** Heads. */
    @Param({"8"})
    public int heads;

    /** Width of each head (keyDim = valueDim, except additive scores: keyDim 1). */
    @Param({"64"})
    public int headDim;
  }

  /** Inputs for the dense kernel. */
  @State(Scope.Benchmark)
  public static class KernelInput {
    /** Score function: scaled dot-product, GAT additive, GATv2. */
    @Param({"dot", "additive", "gatv2"})
    public String score;

    /**
     * {@code vector}: exponentials in Java on the Vector API (the default where the JVM reads
     * {@code jdk.incubator.vector}); {@code nd4j}: ND4J's Exp and SoftMax ops ({@code
     * -Dheed.dense.vector=false}, the route without the Vector API).
     */
    @Param({"vector"})
    public String softmax;

    AttentionKernel kernel;
    AttentionKernel sparseKernel;
    CompletePattern pattern;
    ScoreFunction scoreFunction;
    HeadShape shape;
    float[] query;
    float[] key;
    float[] value;
    float[] out;

    /**
     * Builds seeded inputs.
     *
     * @param s the shape
     */
    @Setup(Level.Trial)
    public void setUp(Shape s) {
      if (softmax.equals("nd4j")) {
        System.setProperty("heed.dense.vector", "false");
      } else if (!softmax.equals("vector")) {
        throw new IllegalArgumentException("softmax must be vector or nd4j");
      }
      Random random = new Random(SEED);
      int keyDim = score.equals("additive") ? 1 : s.headDim;
      shape = new HeadShape(s.heads, keyDim, s.headDim);
      scoreFunction =
          switch (score) {
            case "dot" -> ScoreFunction.scaledDotProduct();
            case "additive" -> ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
            case "gatv2" -> ScoreFunction.gatv2(0.2f, random(random, shape.keyWidth()));
            default -> throw new IllegalArgumentException("unknown score " + score);
          };
      pattern = CompletePattern.of(s.n);
      query = random(random, s.n * shape.keyWidth());
      key = random(random, s.n * shape.keyWidth());
      value = random(random, s.n * shape.valueWidth());
      out = new float[s.n * shape.valueWidth()];
      kernel =
          new DenseAttentionKernelProvider()
              .create(KernelOptions.defaults().withDenseMemoryBudgetBytes(512L << 20));
      sparseKernel = AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults());
      String route = softmax.equals("vector") ? "Java vector" : "ND4J exp";
      if (!kernel.describe().contains(route)) {
        throw new IllegalStateException(
            "asked for the " + softmax + " softmax but got " + kernel.describe());
      }
    }
  }

  /**
   * Full multi-head self-attention with its four projections, for the comparison with ND4J's {@code
   * MultiHeadDotProductAttention} op: node features {@code x} of width {@code H·d}, weights {@code
   * Wq, Wk, Wv} ({@code H·d × H·d}, one {@code d}-column slice per head) and {@code Wo}.
   */
  @State(Scope.Benchmark)
  public static class ProjectedInput {
    AttentionKernel kernel;
    AttentionKernel sparseKernel;
    HeadShape shape;
    INDArray x;
    INDArray wq;
    INDArray wk;
    INDArray wv;
    INDArray wo;
    INDArray q;
    INDArray k;
    INDArray v;
    INDArray attended;
    INDArray out;
    float[] query;
    float[] key;
    float[] value;
    float[] heads;
    INDArray batchedX;
    INDArray headWq;
    INDArray headWk;
    INDArray headWv;

    @Setup(Level.Trial)
    public void setUp(Shape s) {
      Random random = new Random(SEED + 1);
      int width = s.heads * s.headDim;
      shape = new HeadShape(s.heads, s.headDim, s.headDim);
      kernel =
          new DenseAttentionKernelProvider()
              .create(KernelOptions.defaults().withDenseMemoryBudgetBytes(512L << 20));
      sparseKernel = AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults());
      float scale = (float) (1 / Math.sqrt(width));
      float[] xs = scaled(random(random, s.n * width), 1f);
      float[] wqs = scaled(random(random, width * width), scale);
      float[] wks = scaled(random(random, width * width), scale);
      float[] wvs = scaled(random(random, width * width), scale);
      float[] wos = scaled(random(random, width * width), scale);
      x = Nd4j.create(xs, new long[] {s.n, width}, 'c');
      wq = Nd4j.create(wqs, new long[] {width, width}, 'c');
      wk = Nd4j.create(wks, new long[] {width, width}, 'c');
      wv = Nd4j.create(wvs, new long[] {width, width}, 'c');
      wo = Nd4j.create(wos, new long[] {width, width}, 'c');
      q = Nd4j.create(DataType.FLOAT, new long[] {s.n, width}, 'c');
      k = Nd4j.create(DataType.FLOAT, new long[] {s.n, width}, 'c');
      v = Nd4j.create(DataType.FLOAT, new long[] {s.n, width}, 'c');
      attended = Nd4j.create(DataType.FLOAT, new long[] {s.n, width}, 'c');
      out = Nd4j.create(DataType.FLOAT, new long[] {s.n, width}, 'c');
      query = new float[s.n * width];
      key = new float[s.n * width];
      value = new float[s.n * width];
      heads = new float[s.n * width];
      // ND4J's layout: x as [1, nIn, n]; per-head weights [H, d, nIn] with row (h, c) = column
      // h·d + c of W; Wo as [H·d, nOut]
      batchedX = x.transpose().dup('c').reshape(1, width, s.n);
      headWq = wq.transpose().dup('c').reshape(s.heads, s.headDim, width);
      headWk = wk.transpose().dup('c').reshape(s.heads, s.headDim, width);
      headWv = wv.transpose().dup('c').reshape(s.heads, s.headDim, width);
      checkSameResult(s);
    }

    /** Both benchmarks must compute the same thing: compare their outputs once. */
    private void checkSameResult(Shape s) {
      INDArray heed = new DenseAttentionBenchmark().denseKernelWithProjections(s, this).dup();
      INDArray nd4j =
          Nd4j.exec(
              new MultiHeadDotProductAttention(
                  batchedX, batchedX, batchedX, headWq, headWk, headWv, wo, null, true))[0];
      INDArray nd4jNodeMajor = nd4j.reshape(heed.columns(), s.n).transpose();
      double error =
          nd4jNodeMajor.sub(heed).norm2Number().doubleValue() / heed.norm2Number().doubleValue();
      nd4j.close();
      heed.close();
      if (!(error < 1e-4)) {
        throw new IllegalStateException(
            "Heed and ND4J's multi-head attention disagree: relative error " + error);
      }
    }

    @TearDown(Level.Trial)
    public void tearDown() {
      for (INDArray a :
          new INDArray[] {
            x, wq, wk, wv, wo, q, k, v, attended, out, batchedX, headWq, headWk, headWv
          }) {
        a.close();
      }
    }
  }

  private static float[] scaled(float[] a, float factor) {
    for (int i = 0; i < a.length; i++) {
      a[i] *= factor;
    }
    return a;
  }

  /** Per-head packed inputs and preallocated outputs for the gemm floor and ND4J's op. */
  @State(Scope.Benchmark)
  public static class PackedInput {
    INDArray[] query;
    INDArray[] key;
    INDArray[] value;
    INDArray scores;
    INDArray out;
    INDArray batchedQuery;
    INDArray batchedKey;
    INDArray batchedValue;
    double scale;

    /**
     * Builds seeded inputs.
     *
     * @param s the shape
     */
    @Setup(Level.Trial)
    public void setUp(Shape s) {
      Random random = new Random(SEED);
      query = new INDArray[s.heads];
      key = new INDArray[s.heads];
      value = new INDArray[s.heads];
      for (int h = 0; h < s.heads; h++) {
        query[h] = Nd4j.create(random(random, s.n * s.headDim), new long[] {s.n, s.headDim}, 'c');
        key[h] = Nd4j.create(random(random, s.n * s.headDim), new long[] {s.n, s.headDim}, 'c');
        value[h] = Nd4j.create(random(random, s.n * s.headDim), new long[] {s.n, s.headDim}, 'c');
      }
      scores = Nd4j.create(DataType.FLOAT, new long[] {s.n, s.n}, 'c');
      out = Nd4j.create(DataType.FLOAT, new long[] {s.n, s.headDim}, 'c');
      long[] batched = {s.heads, s.headDim, s.n};
      batchedQuery = Nd4j.create(random(random, s.heads * s.headDim * s.n), batched, 'c');
      batchedKey = Nd4j.create(random(random, s.heads * s.headDim * s.n), batched, 'c');
      batchedValue = Nd4j.create(random(random, s.heads * s.headDim * s.n), batched, 'c');
      scale = 1.0 / Math.sqrt(s.headDim);
    }

    /** Frees the off-heap arrays. */
    @TearDown(Level.Trial)
    public void tearDown() {
      for (INDArray[] arrays : new INDArray[][] {query, key, value}) {
        for (INDArray a : arrays) {
          a.close();
        }
      }
      scores.close();
      out.close();
      batchedQuery.close();
      batchedKey.close();
      batchedValue.close();
    }
  }

  static float[] random(Random random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = 2 * random.nextFloat() - 1;
    }
    return a;
  }

  /**
   * The dense kernel, full self-attention.
   *
   * @param s the shape (sweeps n, heads, head dim)
   * @param in the kernel's inputs
   * @return the output array
   */
  @Benchmark
  public float[] denseKernel(Shape s, KernelInput in) {
    in.kernel.attend(
        in.pattern, in.scoreFunction, in.shape, in.query, in.key, in.value, in.out, null);
    return in.out;
  }

  /**
   * The sparse (CSR) kernel over the same complete pattern and inputs, on all cores: full
   * self-attention as graph attention over the complete graph, for the comparison with ND4J's op.
   *
   * @param s the shape
   * @param in the kernel's inputs
   * @return the output, so the work is not dead code
   */
  @Benchmark
  public float[] sparseKernel(Shape s, KernelInput in) {
    in.sparseKernel.attend(
        in.pattern, in.scoreFunction, in.shape, in.query, in.key, in.value, in.out, null);
    return in.out;
  }

  /**
   * The two matrix products alone, per head, into preallocated arrays.
   *
   * @param s the shape
   * @param in packed inputs
   * @return the last head's output
   */
  @Benchmark
  public INDArray twoGemmsAlone(Shape s, PackedInput in) {
    for (int h = 0; h < s.heads; h++) {
      Nd4j.gemm(in.query[h], in.key[h], in.scores, false, true, in.scale, 0.0);
      Nd4j.gemm(in.scores, in.value[h], in.out, false, false, 1.0, 0.0);
    }
    return in.out;
  }

  /**
   * Heed's dense path with the four projections around it, as a self-attention layer runs it: three
   * gemms {@code X·W}, copies into Heed's arrays, the kernel, the output gemm.
   *
   * @param s the shape
   * @param in inputs and weights
   * @return the output
   */
  @Benchmark
  public INDArray denseKernelWithProjections(Shape s, ProjectedInput in) {
    return withProjections(s, in, in.kernel);
  }

  /**
   * The same with the sparse (CSR) path over the complete pattern.
   *
   * @param s the shape
   * @param in inputs and weights
   * @return the output
   */
  @Benchmark
  public INDArray sparseKernelWithProjections(Shape s, ProjectedInput in) {
    return withProjections(s, in, in.sparseKernel);
  }

  private static INDArray withProjections(Shape s, ProjectedInput in, AttentionKernel kernel) {
    Nd4j.gemm(in.x, in.wq, in.q, false, false, 1.0, 0.0);
    Nd4j.gemm(in.x, in.wk, in.k, false, false, 1.0, 0.0);
    Nd4j.gemm(in.x, in.wv, in.v, false, false, 1.0, 0.0);
    in.q.data().asNioFloat().get(0, in.query);
    in.k.data().asNioFloat().get(0, in.key);
    in.v.data().asNioFloat().get(0, in.value);
    kernel.attend(
        CompletePattern.of(s.n),
        ScoreFunction.scaledDotProduct(),
        in.shape,
        in.query,
        in.key,
        in.value,
        in.heads,
        null);
    in.attended.data().asNioFloat().put(0, in.heads);
    Nd4j.gemm(in.attended, in.wo, in.out, false, false, 1.0, 0.0);
    return in.out;
  }

  /**
   * ND4J's own {@code MultiHeadDotProductAttention} op (scaled) on the same features and weights:
   * its projections, attention and output projection in one call.
   *
   * @param s the shape
   * @param in inputs and weights
   * @return a probe of the output, so the work is not dead code
   */
  @Benchmark
  public double nd4jMultiHeadAttention(Shape s, ProjectedInput in) {
    INDArray result =
        Nd4j.exec(
            new MultiHeadDotProductAttention(
                in.batchedX,
                in.batchedX,
                in.batchedX,
                in.headWq,
                in.headWk,
                in.headWv,
                in.wo,
                null,
                true))[0];
    double probe = result.getDouble(0L) + result.getDouble(result.length() - 1);
    result.close();
    return probe;
  }

  /**
   * ND4J's scaled dot-product attention op over all heads as one batch.
   *
   * @param s the shape
   * @param in packed inputs
   * @return a checksum of the output (the output itself is closed)
   */
  @Benchmark
  public double nd4jDotProductAttention(Shape s, PackedInput in) {
    INDArray result =
        Nd4j.exec(
            new DotProductAttention(
                in.batchedQuery, in.batchedKey, in.batchedValue, null, true, false))[0];
    double probe = result.getDouble(0L) + result.getDouble(result.length() - 1);
    result.close();
    return probe;
  }
}
