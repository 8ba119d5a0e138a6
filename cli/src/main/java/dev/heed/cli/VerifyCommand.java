package dev.heed.cli;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import java.io.PrintWriter;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.concurrent.Callable;
import picocli.CommandLine.Command;
import picocli.CommandLine.Mixin;
import picocli.CommandLine.Option;
import picocli.CommandLine.Spec;

/**
 * {@code heed verify}: runs every kernel on this machine against the float64 reference on fresh
 * random inputs and prints the worst relative error per path and score function. A burn-in check
 * for new hardware; exits {@link HeedCli#EXIT_VERIFY_FAILED} if any error exceeds its tolerance.
 */
@Command(
    name = "verify",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description =
        "Check every kernel against a float64 reference on fresh random inputs; non-zero exit if any"
            + " error exceeds the tolerance.")
final class VerifyCommand implements Callable<Integer> {

  /** Tolerance on the norm-wise relative error of float32 kernels against float64. */
  static final double TOLERANCE = 1e-5;

  @Spec picocli.CommandLine.Model.CommandSpec spec;

  @Mixin DebugOption debug;

  @Option(
      names = "--seed",
      description = "Random seed (default: a fresh one, printed).",
      paramLabel = "N")
  Long seed;

  @Option(
      names = "--threads",
      description = "Threads for the sparse path (default: ${DEFAULT-VALUE}).",
      defaultValue = "2",
      paramLabel = "N")
  int threads;

  private record Case(int n, int heads, int keyDim, int valueDim, double density) {}

  @Override
  public Integer call() {
    PrintWriter out = spec.commandLine().getOut();
    long s = seed != null ? seed : System.nanoTime();
    out.printf(
        "heed verify: seed %d, tolerance %.0e (relative to the largest output)%n", s, TOLERANCE);
    List<Case> cases =
        List.of(
            new Case(1, 1, 4, 4, 1.0),
            new Case(7, 3, 5, 5, 0.5),
            new Case(61, 8, 8, 8, 0.1),
            new Case(200, 4, 16, 16, 0.05),
            new Case(200, 2, 64, 64, 1.0));
    List<ScoreFunction> scores = new ArrayList<>();
    scores.add(ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE));
    scores.add(null); // GATv2: its attention vector depends on the shape, made per case
    scores.add(ScoreFunction.scaledDotProduct());
    String[] names = {"additive (GAT)", "GATv2", "scaled dot-product"};
    boolean failed = false;
    java.util.Map<ComputePath, AttentionKernel> kernels =
        new java.util.EnumMap<>(ComputePath.class);
    for (ComputePath path : ComputePath.values()) {
      AttentionKernel kernel =
          AttentionKernels.forPath(path, KernelOptions.defaults().withThreads(threads));
      kernels.put(path, kernel);
      out.printf(
          "%-6s kernel: %s%n", path.name().toLowerCase(java.util.Locale.ROOT), kernel.describe());
    }
    out.printf("%n%-8s %-20s %14s  %s%n", "path", "score", "worst rel err", "result");
    for (ComputePath path : ComputePath.values()) {
      AttentionKernel kernel = kernels.get(path);
      for (int f = 0; f < scores.size(); f++) {
        SplittableRandom random = new SplittableRandom(s + 31L * f + 7L * path.ordinal());
        double worst = 0;
        for (Case c : cases) {
          worst = Math.max(worst, check(kernel, f, scores.get(f), c, random));
        }
        boolean ok = worst <= TOLERANCE;
        failed |= !ok;
        out.printf(
            "%-8s %-20s %14.2e  %s%n",
            path.name().toLowerCase(java.util.Locale.ROOT), names[f], worst, ok ? "ok" : "FAILED");
      }
    }
    // The sparse path's packed node table (GAT scores, 8 heads x 8 dims, graphs of more than about
    // 58k nodes) only runs on large graphs, which the cases above (sized for the dense path's n^2)
    // never reach: one sparse-only case of 65,536 nodes (an R-MAT graph, edge factor 8).
    SplittableRandom random = new SplittableRandom(s + 1009L);
    double packedWorst = checkLargeGat(kernels.get(ComputePath.SPARSE), random);
    boolean packedOk = packedWorst <= TOLERANCE;
    failed |= !packedOk;
    out.printf(
        "%-8s %-20s %14.2e  %s%n",
        "sparse", "GAT, 65,536 nodes", packedWorst, packedOk ? "ok" : "FAILED");
    out.flush();
    if (failed) {
      throw new CliException(
          "a kernel exceeded the tolerance " + TOLERANCE + " (seed " + s + ")",
          HeedCli.EXIT_VERIFY_FAILED);
    }
    return 0;
  }

  private static double check(
      AttentionKernel kernel,
      int scoreIndex,
      ScoreFunction score,
      Case c,
      SplittableRandom random) {
    int keyDim = scoreIndex == 0 ? 1 : c.keyDim();
    HeadShape shape = new HeadShape(c.heads(), keyDim, c.valueDim());
    if (scoreIndex == 1) {
      score =
          ScoreFunction.gatv2(
              ScoreFunction.GAT_NEGATIVE_SLOPE, randomArray(shape.keyWidth(), random));
    }
    AttentionPattern pattern =
        c.density() >= 1.0 ? CompletePattern.of(c.n()) : randomGraph(c.n(), c.density(), random);
    float[] q = randomArray(c.n() * shape.keyWidth(), random);
    float[] k = randomArray(c.n() * shape.keyWidth(), random);
    float[] v = randomArray(c.n() * shape.valueWidth(), random);
    float[] out = new float[c.n() * shape.valueWidth()];
    kernel.attend(pattern, score, shape, q, k, v, out, null);
    return ReferenceAttention.relativeError(
        ReferenceAttention.attend(pattern, score, shape, q, k, v).out(), out);
  }

  private static float[] randomArray(int length, SplittableRandom random) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (float) (2 * random.nextDouble() - 1);
    }
    return a;
  }

  /** A random graph with self-loops (so no row is empty) at roughly the given density. */
  private static double checkLargeGat(AttentionKernel kernel, SplittableRandom random) {
    // an R-MAT graph of 2^16 nodes, edge factor 8, with a self-loop per node and repeats merged
    CsrGraph graph =
        RmatGenerator.withScale(16)
            .edgeFactor(8)
            .seed(random.nextLong())
            .generateEdges()
            .selfLoops(SelfLoopPolicy.ADD)
            .duplicates(DuplicatePolicy.MERGE)
            .build();
    int n = graph.nodeCount();
    ScoreFunction score = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
    HeadShape shape = new HeadShape(8, 1, 8);
    float[] q = randomArray(n * shape.keyWidth(), random);
    float[] k = randomArray(n * shape.keyWidth(), random);
    float[] v = randomArray(n * shape.valueWidth(), random);
    float[] out = new float[n * shape.valueWidth()];
    kernel.attend(graph, score, shape, q, k, v, out, null);
    return ReferenceAttention.relativeError(
        ReferenceAttention.attend(graph, score, shape, q, k, v).out(), out);
  }

  private static CsrGraph randomGraph(int n, double density, SplittableRandom random) {
    int[] offsets = new int[n + 1];
    List<Integer> cols = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < n; j++) {
        if (i == j || random.nextDouble() < density) {
          cols.add(j);
        }
      }
      offsets[i + 1] = cols.size();
    }
    return CsrGraph.of(offsets, cols.stream().mapToInt(Integer::intValue).toArray());
  }
}
