package dev.heed.bench.kernel;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.sparse.internal.CsrAttentionKernel;
import dev.heed.sparse.internal.CsrKernelVariant;
import java.util.Arrays;
import java.util.SplittableRandom;
import java.util.concurrent.TimeUnit;
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
import org.openjdk.jmh.annotations.Warmup;

/**
 * One layer of sparse (CSR) attention over a seeded graph, all heads and value dims, no weights
 * requested: the kernel {@code AttentionKernels.forPath(SPARSE)} gives, or one of its variants
 * ({@link CsrKernelVariant}, selected by the parameters {@code implementation}, {@code path},
 * {@code prefetch}, {@code packedTable} and {@code factoredWeights}). {@code graph=uniform}:
 * exactly {@code averageDegree} distinct uniformly random sources per row, {@code nodes ·
 * averageDegree} edges. {@code graph=rmat}: an R-MAT graph ({@link RmatGenerator}, Graph500
 * initiator, scrambled ids) of {@code 2^ceil(log2 nodes)} nodes and edge factor {@code
 * averageDegree}, built with self-loops added and repeated edges merged, so its edge count differs
 * a little from {@code nodes · averageDegree}; the setup prints the node and edge counts.
 *
 * <p>Read the score as milliseconds per layer; edges per second = {@code edges / (ms / 1000)}. The
 * reference case is R-MAT, 1M nodes, 16M edges, 8 heads × 8 dims, additive scores, 2 threads. Run
 * it with, for example:
 *
 * <pre>
 * java -jar benchmarks/target/benchmarks.jar CsrAttentionBenchmark -p graph=rmat \
 *     -p nodes=1048576 -p score=additive -p implementation=vector
 * </pre>
 *
 * <p>Each fork creates one variant only (code that sees both branches of a switch compiles worse
 * for each, so variants are compared fork against fork). {@code path=perHead}: additive scores with
 * 8 heads of 8 floats take the per-head path instead of the all-heads one (other shapes and scores
 * always take the per-head path). {@code implementation=scalar}: the plain Java loops. Every fork
 * gets {@code --add-modules jdk.incubator.vector} and transparent huge pages for its heap ({@code
 * -XX:+UseTransparentHugePages}: random gathers over hundreds of MiB otherwise miss the TLB;
 * measured here about +20 % at 300k nodes, busy machine). On JDK 17 an occasional fork used to
 * compile the kernel 2-3x slower; Heed's Vector API warm-up now prevents that (DEVELOPERS.md,
 * "Vector API lessons").
 */
@State(Scope.Benchmark)
@BenchmarkMode(Mode.AverageTime)
@OutputTimeUnit(TimeUnit.MILLISECONDS)
@Warmup(iterations = 3, time = 2)
@Measurement(iterations = 5, time = 2)
@Fork(
    value = 2,
    jvmArgsAppend = {
      "--add-modules",
      "jdk.incubator.vector",
      "-Xms4g",
      "-Xmx4g",
      "-XX:+UseTransparentHugePages"
    })
public class CsrAttentionBenchmark {

  /** Number of nodes n. */
  @Param({"100000"})
  public int nodes;

  /** Sources per row; E = nodes · averageDegree. */
  @Param({"16"})
  public int averageDegree;

  /** Heads H. */
  @Param({"8"})
  public int heads;

  /** Value width per head, and key width for GATv2 and dot-product scores. */
  @Param({"8"})
  public int headDim;

  /** {@code additive} (GAT), {@code gatv2} or {@code dot} (scaled dot-product). */
  @Param({"additive", "gatv2", "dot"})
  public String score;

  /** Threads per call ({@link KernelOptions#threads()}). */
  @Param({"1", "2"})
  public int threads;

  /** {@code vector} (Vector API inner loops) or {@code scalar} (plain Java loops). */
  @Param({"vector", "scalar"})
  public String implementation;

  /** {@code uniform} (fixed degree, uniform sources) or {@code rmat} (R-MAT, power-law). */
  @Param({"uniform"})
  public String graph;

  /** {@code allHeads} (default kernel) or {@code perHead} (all-heads path switched off). */
  @Param({"allHeads"})
  public String path;

  /** {@code on} (default kernel: rows loaded ahead) or {@code off} (no loads ahead). */
  @Param({"on"})
  public String prefetch;

  /**
   * {@code auto} (the kernel uses its packed node table where it applies: additive 8 × 8 over at
   * least 16 MiB of table) or {@code off} (keys and values are always read from the caller's
   * arrays), for A/B comparisons in one run.
   */
  @Param({"auto"})
  public String packedTable;

  /**
   * {@code on} (the kernel uses factored weights on its packed node table when no weights are asked
   * for, as here) or {@code off} (the exact per-row softmax on the table's exact layout), for A/B
   * comparisons in one run.
   */
  @Param({"on"})
  public String factoredWeights;

  /**
   * {@code float32} (default: value rows as given) or {@code bfloat16} (the factored table holds
   * value rows rounded to bfloat16, {@link NodeRowPrecision#BFLOAT16}), for A/B comparisons in one
   * run.
   */
  @Param({"float32"})
  public String nodeRows;

  /** Seed of the graph and the inputs. */
  @Param({"20260401"})
  public long seed;

  private AttentionKernel kernel;
  private CsrGraph csr;
  private ScoreFunction scoreFunction;
  private HeadShape shape;
  private float[] query;
  private float[] key;
  private float[] value;
  private float[] out;

  /** Builds the graph and inputs and picks the kernel variant. */
  @Setup(Level.Trial)
  public void setUp() {
    CsrKernelVariant variant =
        CsrKernelVariant.DEFAULT
            .withVectorLoops(choose("implementation", implementation, "vector", "scalar"))
            .withAllHeads(choose("path", path, "allHeads", "perHead"))
            .withPrefetch(choose("prefetch", prefetch, "on", "off"))
            .withFactoredWeights(choose("factoredWeights", factoredWeights, "on", "off"))
            .withNodeRows(
                choose("nodeRows", nodeRows, "bfloat16", "float32")
                    ? NodeRowPrecision.BFLOAT16
                    : NodeRowPrecision.FLOAT32);
    if (!choose("packedTable", packedTable, "auto", "off")) {
      variant = variant.withMinPackedTableBytes(Long.MAX_VALUE);
    }
    kernel = CsrAttentionKernel.create(threads, variant);
    if (!kernel.describe().startsWith("csr-" + implementation)) {
      throw new IllegalStateException(
          "asked for the " + implementation + " implementation but got " + kernel.describe());
    }
    SplittableRandom random = new SplittableRandom(seed);
    csr =
        switch (graph) {
          case "uniform" -> randomGraph(random, nodes, averageDegree);
          case "rmat" ->
              RmatGenerator.withScale(32 - Integer.numberOfLeadingZeros(Math.max(1, nodes - 1)))
                  .edgeFactor(averageDegree)
                  .seed(seed)
                  .generateEdges()
                  .selfLoops(SelfLoopPolicy.ADD)
                  .duplicates(DuplicatePolicy.MERGE)
                  .build();
          default -> throw new IllegalArgumentException("graph must be uniform or rmat");
        };
    int n = csr.nodeCount();
    System.out.println(
        "graph " + graph + ": " + n + " nodes, " + csr.edgeCount() + " edges (with self-loops)");
    switch (score) {
      case "additive" -> {
        scoreFunction = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
        shape = new HeadShape(heads, 1, headDim);
      }
      case "gatv2" -> {
        shape = new HeadShape(heads, headDim, headDim);
        scoreFunction =
            ScoreFunction.gatv2(
                ScoreFunction.GAT_NEGATIVE_SLOPE, uniform(random, shape.keyWidth()));
      }
      case "dot" -> {
        scoreFunction = ScoreFunction.scaledDotProduct();
        shape = new HeadShape(heads, headDim, headDim);
      }
      default -> throw new IllegalArgumentException("score must be additive, gatv2 or dot");
    }
    query = uniform(random, n * shape.keyWidth());
    key = uniform(random, n * shape.keyWidth());
    value = uniform(random, n * shape.valueWidth());
    out = new float[n * shape.valueWidth()];
  }

  /**
   * One attention layer over every row.
   *
   * @return the output, so the work is not dead code
   */
  @Benchmark
  public float[] attend() {
    kernel.attend(csr, scoreFunction, shape, query, key, value, out, null);
    return out;
  }

  /** Returns true for {@code on}, false for {@code off}, and rejects anything else. */
  private static boolean choose(String param, String value, String on, String off) {
    if (value.equals(on) || value.equals(off)) {
      return value.equals(on);
    }
    throw new IllegalArgumentException(param + " must be " + on + " or " + off + ", got " + value);
  }

  private static CsrGraph randomGraph(SplittableRandom random, int n, int degree) {
    int d = Math.min(degree, n);
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * d];
    int[] row = new int[d];
    for (int i = 0; i < n; i++) {
      int filled = 0;
      while (filled < d) {
        int c = random.nextInt(n);
        boolean seen = false;
        for (int x = 0; x < filled; x++) {
          seen |= row[x] == c;
        }
        if (!seen) {
          row[filled++] = c;
        }
      }
      Arrays.sort(row);
      System.arraycopy(row, 0, columns, i * d, d);
      offsets[i + 1] = (i + 1) * d;
    }
    return CsrGraph.of(offsets, columns);
  }

  private static float[] uniform(SplittableRandom random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) (2 * random.nextDouble() - 1);
    }
    return a;
  }
}
