package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.GraphArbitraries;
import dev.heed.graph.SelfLoopPolicy;
import java.util.SplittableRandom;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;
import net.jqwik.api.constraints.IntRange;

/**
 * Properties of the two kernels (jqwik) over random and degenerate graphs ({@link
 * GraphArbitraries}: no nodes, one node, rows without entries, only self-loops, one hub, repeated
 * edges), every score function and head shape, with fresh seeded Gaussian inputs:
 *
 * <ul>
 *   <li>both paths agree with the float64 reference ({@link ReferenceAttention}, the equations of
 *       Veličković et al., "Graph Attention Networks", ICLR 2018, eq. 1–4; Brody, Alon, Yahav, "How
 *       Attentive are Graph Attention Networks?", ICLR 2022, eq. 7; Vaswani et al., "Attention Is
 *       All You Need", NeurIPS 2017, eq. 1), and so with each other;
 *   <li>each row's weights are a softmax: in [0, 1], summing to 1 per head (same sources);
 *   <li>the same bits for every thread count (the kernel contract, {@link AttentionKernel}).
 * </ul>
 *
 * Tolerance: 1e-5 norm-wise relative error (float32 accumulation over rows of up to 300 entries).
 */
class KernelPropertiesTest {

  private static final double TOLERANCE = 1e-5;

  /** Head shapes: small ones, and 8 × 8, which the sparse kernel runs on its all-heads path. */
  private static final int[][] SHAPES = {{1, 1}, {2, 3}, {3, 5}, {4, 8}, {8, 8}};

  @Provide
  Arbitrary<GraphArbitraries.EdgeList> edgeLists() {
    return GraphArbitraries.edgeLists(60);
  }

  @Property(tries = 60)
  void bothPathsMatchTheFloat64ReferenceAndRowsAreSoftmaxes(
      @ForAll("edgeLists") GraphArbitraries.EdgeList edges,
      @ForAll SelfLoopPolicy selfLoops,
      @ForAll DirectionPolicy direction,
      @ForAll @IntRange(min = 0, max = 2) int scoreKind,
      @ForAll @IntRange(min = 0, max = 4) int shapeIndex,
      @ForAll long seed) {
    CsrGraph graph = edges.build(selfLoops, direction);
    Inputs in = Inputs.of(graph.nodeCount(), scoreKind, SHAPES[shapeIndex], seed);
    ReferenceAttention.Result ref =
        ReferenceAttention.attend(graph, in.score, in.shape, in.q, in.k, in.v);
    for (ComputePath path : new ComputePath[] {ComputePath.SPARSE, ComputePath.DENSE}) {
      float[] out = new float[in.v.length];
      float[] weights = new float[(int) graph.entryCount() * in.shape.heads()];
      kernel(path, 1).attend(graph, in.score, in.shape, in.q, in.k, in.v, out, weights);
      double outError = ReferenceAttention.relativeError(ref.out(), out);
      assertTrue(outError <= TOLERANCE, path + ": output relative error " + outError);
      double weightError = ReferenceAttention.relativeError(ref.weights(), weights);
      assertTrue(weightError <= TOLERANCE, path + ": weight relative error " + weightError);
      assertRowsAreSoftmaxes(graph, in.shape.heads(), weights, path);
    }
  }

  @Property(tries = 40)
  void everyThreadCountGivesTheSameBits(
      @ForAll("edgeLists") GraphArbitraries.EdgeList edges,
      @ForAll @IntRange(min = 0, max = 2) int scoreKind,
      @ForAll @IntRange(min = 0, max = 4) int shapeIndex,
      @ForAll @IntRange(min = 2, max = 5) int threads,
      @ForAll long seed) {
    CsrGraph graph = edges.build(SelfLoopPolicy.ADD, DirectionPolicy.SYMMETRISE);
    Inputs in = Inputs.of(graph.nodeCount(), scoreKind, SHAPES[shapeIndex], seed);
    for (ComputePath path : new ComputePath[] {ComputePath.SPARSE, ComputePath.DENSE}) {
      float[] one = new float[in.v.length];
      float[] oneWeights = new float[(int) graph.entryCount() * in.shape.heads()];
      kernel(path, 1).attend(graph, in.score, in.shape, in.q, in.k, in.v, one, oneWeights);
      float[] many = new float[in.v.length];
      float[] manyWeights = new float[oneWeights.length];
      kernel(path, threads).attend(graph, in.score, in.shape, in.q, in.k, in.v, many, manyWeights);
      assertArrayEquals(one, many, path + ", " + threads + " threads: outputs");
      assertArrayEquals(oneWeights, manyWeights, path + ", " + threads + " threads: weights");
    }
  }

  private static AttentionKernel kernel(ComputePath path, int threads) {
    return AttentionKernels.forPath(path, KernelOptions.defaults().withThreads(threads));
  }

  /** Per head, a non-empty row's weights lie in [0, 1] and sum to 1 (float32 rounding). */
  private static void assertRowsAreSoftmaxes(
      CsrGraph graph, int heads, float[] weights, ComputePath path) {
    for (int i = 0; i < graph.nodeCount(); i++) {
      if (graph.degree(i) == 0) {
        continue;
      }
      for (int h = 0; h < heads; h++) {
        double sum = 0;
        for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
          float w = weights[e * heads + h];
          assertTrue(w >= 0 && w <= 1, path + ": weight " + w + " in row " + i);
          sum += w;
        }
        assertEquals(1.0, sum, 1e-5 * graph.degree(i), path + ": row " + i + ", head " + h);
      }
    }
  }

  /** Fresh seeded Gaussian inputs for one call. */
  private record Inputs(ScoreFunction score, HeadShape shape, float[] q, float[] k, float[] v) {
    static Inputs of(int n, int scoreKind, int[] headsAndDim, long seed) {
      SplittableRandom random = new SplittableRandom(seed);
      int heads = headsAndDim[0];
      int dim = headsAndDim[1];
      HeadShape shape = new HeadShape(heads, scoreKind == 0 ? 1 : dim, dim);
      ScoreFunction score =
          switch (scoreKind) {
            case 0 -> ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
            case 1 -> ScoreFunction.gatv2(0.2f, gaussian(heads * dim, random));
            default -> ScoreFunction.scaledDotProduct();
          };
      return new Inputs(
          score,
          shape,
          gaussian(n * shape.keyWidth(), random),
          gaussian(n * shape.keyWidth(), random),
          gaussian(n * shape.valueWidth(), random));
    }
  }

  private static float[] gaussian(int length, SplittableRandom random) {
    float[] x = new float[length];
    for (int i = 0; i < length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    return x;
  }
}
