package dev.heed.attention;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.EnumSource;

/**
 * The behaviour every {@link AttentionKernel} must show, whatever its path: one test body, run
 * against each implementation by a subclass that supplies {@link #kernel(int)}. Inputs are fresh
 * random data, seeded per test (the seed is in every failure message); float32 results are compared
 * with the float64 {@link ReferenceAttention} by norm-wise relative error.
 *
 * <p>Sizes stay small enough for an O(n²) dense kernel: the whole contract takes a few seconds per
 * implementation.
 */
public abstract class AttentionKernelContractTest {

  /** Relative error allowed against the float64 reference (float32 paths, see RULES). */
  protected static final double TOLERANCE = 1e-5;

  private static final int[] SMALL_SIZES = {1, 2, 7, 61};
  private static final int[] HEADS = {1, 3, 8};
  private static final int[] DIMS = {1, 5, 64};

  /**
   * Returns the kernel under test.
   *
   * @param threads the thread count to pass in {@link KernelOptions#threads()}
   * @return a kernel; it may be shared between tests
   */
  protected abstract AttentionKernel kernel(int threads);

  /** The three score functions of {@link ScoreFunction}. */
  protected enum ScoreKind {
    ADDITIVE,
    GATV2,
    SCALED_DOT_PRODUCT
  }

  // ---------------------------------------------------------------- reference comparisons

  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void matchesFloat64ReferenceOnRandomSparseGraphs(ScoreKind kind) {
    long seed = 0x5EED_0001L + kind.ordinal();
    Random random = new Random(seed);
    for (int n : SMALL_SIZES) {
      for (int heads : HEADS) {
        for (int dim : DIMS) {
          AttentionPattern graph = randomGraph(random, n, 6);
          checkAgainstReference(random, graph, kind, heads, dim, seed);
        }
      }
    }
    // n = 1000 only with small heads and dims, so an O(n²) dense kernel stays quick
    for (int heads : new int[] {1, 3}) {
      for (int dim : new int[] {1, 5}) {
        checkAgainstReference(random, randomGraph(random, 1000, 12), kind, heads, dim, seed);
      }
    }
  }

  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void matchesFloat64ReferenceOnCompletePattern(ScoreKind kind) {
    long seed = 0x5EED_0002L + kind.ordinal();
    Random random = new Random(seed);
    for (int n : SMALL_SIZES) {
      for (int heads : HEADS) {
        for (int dim : DIMS) {
          checkAgainstReference(random, CompletePattern.of(n), kind, heads, dim, seed);
        }
      }
    }
    for (int heads : new int[] {1, 3}) {
      for (int dim : new int[] {1, 5}) {
        checkAgainstReference(random, CompletePattern.of(1000), kind, heads, dim, seed);
      }
    }
  }

  private void checkAgainstReference(
      Random random, AttentionPattern pattern, ScoreKind kind, int heads, int dim, long seed) {
    HeadShape shape = shapeFor(kind, heads, dim);
    ScoreFunction score = scoreFor(kind, shape, random);
    int n = pattern.nodeCount();
    float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    Output got = run(kernel(2), pattern, score, shape, q, k, v, true);
    ReferenceAttention.Result want = ReferenceAttention.attend(pattern, score, shape, q, k, v);
    String where = describe(pattern, kind, shape, seed);
    assertClose(want.out(), got.out(), TOLERANCE, "out, " + where);
    assertClose(want.weights(), got.weights(), TOLERANCE, "weights, " + where);
  }

  // Common practice: self-attention is attention over the complete graph, so a CSR graph holding
  // every pair must give what the complete pattern gives (entries in the same row-major order).
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void completeCsrGraphEqualsCompletePattern(ScoreKind kind) {
    long seed = 0x5EED_0003L + kind.ordinal();
    Random random = new Random(seed);
    for (int n : new int[] {1, 7, 61}) {
      HeadShape shape = shapeFor(kind, 3, 5);
      ScoreFunction score = scoreFor(kind, shape, random);
      float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
      Output complete = run(kernel(2), CompletePattern.of(n), score, shape, q, k, v, true);
      Output csr = run(kernel(2), completeGraph(n), score, shape, q, k, v, true);
      String where = "n=" + n + ", " + kind + ", seed=" + seed;
      assertClose(toDouble(complete.out()), csr.out(), TOLERANCE, "out, " + where);
      assertClose(toDouble(complete.weights()), csr.weights(), TOLERANCE, "weights, " + where);
    }
  }

  // ---------------------------------------------------------------- properties

  // Common practice: attention is permutation-equivariant. Renumbering the nodes renumbers the
  // outputs and the weights, and changes nothing else.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void permutationEquivariant(ScoreKind kind) {
    long seed = 0x5EED_0004L + kind.ordinal();
    Random random = new Random(seed);
    int n = 61;
    HeadShape shape = shapeFor(kind, 3, 5);
    ScoreFunction score = scoreFor(kind, shape, random);
    CsrGraph graph = randomGraph(random, n, 8);
    float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    int[] perm = permutation(random, n);
    CsrGraph permuted = permute(graph, perm);
    Output base = run(kernel(2), graph, score, shape, q, k, v, true);
    Output moved =
        run(
            kernel(2),
            permuted,
            score,
            shape,
            permuteRows(q, perm, shape.keyWidth()),
            permuteRows(k, perm, shape.keyWidth()),
            permuteRows(v, perm, shape.valueWidth()),
            true);
    String where = kind + ", seed=" + seed;
    assertClose(
        toDouble(permuteRows(base.out(), perm, shape.valueWidth())),
        moved.out(),
        TOLERANCE,
        "permuted out, " + where);
    double[] expectedWeights = new double[moved.weights().length];
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        int movedEntry = permuted.entryOf(perm[i], perm[graph.column(e)]);
        for (int h = 0; h < shape.heads(); h++) {
          expectedWeights[movedEntry * shape.heads() + h] = base.weights()[e * shape.heads() + h];
        }
      }
    }
    assertClose(expectedWeights, moved.weights(), TOLERANCE, "permuted weights, " + where);
  }

  // Common practice: softmax is shift-invariant. Adding c to every key shifts row i's
  // dot-product scores by q_i·c/√d, a constant per row and head, so the output must not change.
  @Test
  void dotProductShiftInvariantInKeys() {
    long seed = 0x5EED_0005L;
    Random random = new Random(seed);
    for (AttentionPattern pattern : List.of(randomGraph(random, 61, 8), CompletePattern.of(33))) {
      int n = pattern.nodeCount();
      HeadShape shape = new HeadShape(3, 5, 4);
      float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
      float[] c = uniform(random, shape.keyWidth(), -2f, 2f);
      float[] shifted = k.clone();
      for (int j = 0; j < n; j++) {
        for (int x = 0; x < shape.keyWidth(); x++) {
          shifted[j * shape.keyWidth() + x] += c[x];
        }
      }
      ScoreFunction score = ScoreFunction.scaledDotProduct();
      Output base = run(kernel(2), pattern, score, shape, q, k, v, false);
      Output moved = run(kernel(2), pattern, score, shape, q, shifted, v, false);
      assertClose(toDouble(base.out()), moved.out(), TOLERANCE, pattern + ", seed=" + seed);
    }
  }

  // Common practice: softmax is shift-invariant. With every q_i + k_j positive, LeakyReLU is the
  // identity, so adding c_i to q_i shifts row i's GAT scores by c_i: the output must not change.
  @Test
  void additiveShiftInvariantInQueriesOnPositiveScores() {
    long seed = 0x5EED_0006L;
    Random random = new Random(seed);
    CsrGraph graph = randomGraph(random, 61, 8);
    int n = graph.nodeCount();
    HeadShape shape = new HeadShape(3, 1, 4);
    float[] q = uniform(random, n * 3, 0.5f, 1.5f);
    float[] k = uniform(random, n * 3, 0.5f, 1.5f);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    float[] shifted = q.clone();
    for (int x = 0; x < shifted.length; x++) {
      shifted[x] += random.nextFloat();
    }
    ScoreFunction score = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
    Output base = run(kernel(2), graph, score, shape, q, k, v, false);
    Output moved = run(kernel(2), graph, score, shape, shifted, k, v, false);
    assertClose(toDouble(base.out()), moved.out(), TOLERANCE, "seed=" + seed);
  }

  // Common practice: the softmax weights of each row sum to 1.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void weightsOfEachRowSumToOne(ScoreKind kind) {
    long seed = 0x5EED_0007L + kind.ordinal();
    Random random = new Random(seed);
    CsrGraph graph = randomGraph(random, 200, 20);
    HeadShape shape = shapeFor(kind, 3, 5);
    int n = graph.nodeCount();
    Output got =
        run(
            kernel(2),
            graph,
            scoreFor(kind, shape, random),
            shape,
            uniform(random, n * shape.keyWidth(), -3f, 3f),
            uniform(random, n * shape.keyWidth(), -3f, 3f),
            uniform(random, n * shape.valueWidth(), -1f, 1f),
            true);
    assertRowsSumToOne(graph, shape.heads(), got.weights(), kind + ", seed=" + seed);
  }

  // Common practice: with all scores of a row equal, attention is the plain neighbourhood mean.
  @Test
  void equalScoresGiveTheNeighbourhoodMean() {
    long seed = 0x5EED_0008L;
    Random random = new Random(seed);
    CsrGraph graph = randomGraph(random, 61, 10);
    int n = graph.nodeCount();
    int heads = 2;
    int dv = 5;
    float[] v = uniform(random, n * heads * dv, -1f, 1f);
    double[] mean = new double[v.length];
    for (int i = 0; i < n; i++) {
      int degree = graph.rowEnd(i) - graph.rowStart(i);
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        for (int x = 0; x < heads * dv; x++) {
          mean[i * heads * dv + x] += (double) v[graph.column(e) * heads * dv + x] / degree;
        }
      }
    }
    // additive: every q_i and k_j equal, so every score is the same
    HeadShape additiveShape = new HeadShape(heads, 1, dv);
    float[] q = new float[n * heads];
    float[] k = new float[n * heads];
    Arrays.fill(q, 0.3f);
    Arrays.fill(k, -0.7f);
    Output additive =
        run(kernel(2), graph, ScoreFunction.additive(0.2f), additiveShape, q, k, v, false);
    assertClose(mean, additive.out(), 1e-6, "additive, seed=" + seed);
    // dot product: every key equal, so each row's scores are all q_i·k
    HeadShape dotShape = new HeadShape(heads, 4, dv);
    float[] qd = uniform(random, n * dotShape.keyWidth(), -1f, 1f);
    float[] kd = new float[n * dotShape.keyWidth()];
    float[] oneKey = uniform(random, dotShape.keyWidth(), -1f, 1f);
    for (int j = 0; j < n; j++) {
      System.arraycopy(oneKey, 0, kd, j * oneKey.length, oneKey.length);
    }
    Output dot =
        run(kernel(2), graph, ScoreFunction.scaledDotProduct(), dotShape, qd, kd, v, false);
    assertClose(mean, dot.out(), 1e-6, "dot product, seed=" + seed);
  }

  // Brody et al. 2022 (static attention): with GAT (v1) scores LeakyReLU(q_i + k_j) and a
  // monotonic LeakyReLU, every query ranks the same candidate keys in the same order, the order
  // of k_j.
  @Test
  void gatRanksKeysIdenticallyForEveryQuery() {
    long seed = 0x5EED_0009L;
    Random random = new Random(seed);
    int n = 9;
    int heads = 3;
    HeadShape shape = new HeadShape(heads, 1, 2);
    float[] q = uniform(random, n * heads, -2f, 2f);
    float[] k = new float[n * heads];
    for (int h = 0; h < heads; h++) {
      int[] order = permutation(random, n);
      for (int j = 0; j < n; j++) {
        k[j * heads + h] = -2f + 0.45f * order[j]; // distinct keys, 0.45 apart
      }
    }
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    Output got =
        run(kernel(2), CompletePattern.of(n), ScoreFunction.additive(0.2f), shape, q, k, v, true);
    for (int h = 0; h < heads; h++) {
      for (int i = 0; i < n; i++) {
        for (int a = 0; a < n; a++) {
          for (int b = 0; b < n; b++) {
            if (a == b) {
              continue;
            }
            float wa = got.weights()[(i * n + a) * heads + h];
            float wb = got.weights()[(i * n + b) * heads + h];
            boolean keyOrder = k[a * heads + h] > k[b * heads + h];
            assertEquals(
                keyOrder,
                wa > wb,
                "query "
                    + i
                    + ", head "
                    + h
                    + ": keys "
                    + a
                    + " and "
                    + b
                    + " ranked against their k order, seed="
                    + seed);
          }
        }
      }
    }
  }

  // Brody et al. 2022 (dynamic attention): GATv2 can rank the same keys differently for
  // different queries. a = (1, 1), k_0 = (2, 0), k_1 = (0, 2); query 0 = (0, -10) prefers key 0
  // (scores 0 vs -1.6), query 1 = (-10, 0) prefers key 1 (scores -1.6 vs 0).
  @Test
  void gatv2CanRankKeysOppositelyForTwoQueries() {
    HeadShape shape = new HeadShape(1, 2, 1);
    ScoreFunction score = ScoreFunction.gatv2(0.2f, new float[] {1f, 1f});
    float[] q = {0f, -10f, -10f, 0f};
    float[] k = {2f, 0f, 0f, 2f};
    float[] v = {1f, -1f};
    Output got = run(kernel(1), CompletePattern.of(2), score, shape, q, k, v, true);
    float[] w = got.weights(); // row-major: w[i * 2 + j]
    assertTrue(w[0] > w[1], "query 0 must prefer key 0: " + Arrays.toString(w));
    assertTrue(w[3] > w[2], "query 1 must prefer key 1: " + Arrays.toString(w));
    ReferenceAttention.Result want =
        ReferenceAttention.attend(CompletePattern.of(2), score, shape, q, k, v);
    assertClose(want.weights(), w, TOLERANCE, "weights of the constructed case");
  }

  // ---------------------------------------------------------------- edge cases

  // Interface contract (AttentionKernel): a target with no allowed sources gets zeros.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void isolatedNodesGetZeroRows(ScoreKind kind) {
    long seed = 0x5EED_000AL + kind.ordinal();
    Random random = new Random(seed);
    int n = 7;
    // rows 0, 3 and 6 are empty
    CsrGraph graph =
        CsrGraph.of(new int[] {0, 0, 2, 3, 3, 5, 7, 7}, new int[] {0, 4, 1, 2, 6, 3, 5});
    CsrGraph empty = CsrGraph.of(new int[] {0, 0, 0, 0, 0, 0, 0, 0}, new int[0]);
    HeadShape shape = shapeFor(kind, 3, 5);
    ScoreFunction score = scoreFor(kind, shape, random);
    float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    Output got = run(kernel(2), graph, score, shape, q, k, v, true);
    for (int i : new int[] {0, 3, 6}) {
      for (int x = 0; x < shape.valueWidth(); x++) {
        assertEquals(0f, got.out()[i * shape.valueWidth() + x], "row " + i + ", seed=" + seed);
      }
    }
    ReferenceAttention.Result want = ReferenceAttention.attend(graph, score, shape, q, k, v);
    assertClose(want.out(), got.out(), TOLERANCE, "seed=" + seed);
    Output none = run(kernel(2), empty, score, shape, q, k, v, true);
    assertArrayEquals(new float[n * shape.valueWidth()], none.out(), "graph without edges");
    assertEquals(0, none.weights().length);
  }

  // Common practice: softmax over one element is exactly 1, so a single-neighbour row copies
  // that neighbour's value row.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void singleNeighbourRowsHaveWeightExactlyOne(ScoreKind kind) {
    long seed = 0x5EED_000BL + kind.ordinal();
    Random random = new Random(seed);
    int n = 11;
    int[] offsets = new int[n + 1];
    int[] columns = new int[n];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = i + 1;
      columns[i] = (i * 3 + 1) % n;
    }
    CsrGraph graph = CsrGraph.of(offsets, columns);
    HeadShape shape = shapeFor(kind, 3, 5);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    Output got =
        run(
            kernel(2),
            graph,
            scoreFor(kind, shape, random),
            shape,
            uniform(random, n * shape.keyWidth(), -5f, 5f),
            uniform(random, n * shape.keyWidth(), -5f, 5f),
            v,
            true);
    for (float w : got.weights()) {
      assertEquals(1f, w, "weight of a single neighbour, seed=" + seed);
    }
    double[] expected = new double[v.length];
    for (int i = 0; i < n; i++) {
      for (int x = 0; x < shape.valueWidth(); x++) {
        expected[i * shape.valueWidth() + x] = v[columns[i] * shape.valueWidth() + x];
      }
    }
    assertClose(expected, got.out(), 1e-6, "seed=" + seed);
  }

  // Common practice: subtracting the row maximum keeps softmax finite for huge scores; very
  // negative scores must not underflow to 0/0. The output is a convex combination of the
  // neighbours' values, so it stays within their range.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void hugeAndVeryNegativeScoresStayFinite(ScoreKind kind) {
    long seed = 0x5EED_000CL + kind.ordinal();
    Random random = new Random(seed);
    CsrGraph graph = randomGraph(random, 61, 8);
    int n = graph.nodeCount();
    HeadShape shape = shapeFor(kind, 3, 5);
    ScoreFunction score = scoreFor(kind, shape, random);
    float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
    // dot product and GATv2: terms of 1e15 give products of 1e30; additive: scores near 1e4
    float big = kind == ScoreKind.ADDITIVE ? 5e3f : 1e15f;
    List<float[][]> cases = new ArrayList<>();
    cases.add(
        new float[][] {
          uniform(random, n * shape.keyWidth(), -big, big),
          uniform(random, n * shape.keyWidth(), -big, big)
        });
    // very negative: every additive/GATv2 term far below zero
    float[] negative = uniform(random, n * shape.keyWidth(), -1e30f, -1e29f);
    cases.add(new float[][] {negative, uniform(random, n * shape.keyWidth(), -1f, 1f)});
    for (float[][] qk : cases) {
      Output got = run(kernel(2), graph, score, shape, qk[0], qk[1], v, true);
      String where = kind + ", seed=" + seed;
      for (int i = 0; i < n; i++) {
        for (int x = 0; x < shape.valueWidth(); x++) {
          float o = got.out()[i * shape.valueWidth() + x];
          assertTrue(Float.isFinite(o), "out row " + i + " is " + o + ", " + where);
          double lo = Double.POSITIVE_INFINITY;
          double hi = Double.NEGATIVE_INFINITY;
          for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
            float vj = v[graph.column(e) * shape.valueWidth() + x];
            lo = Math.min(lo, vj);
            hi = Math.max(hi, vj);
          }
          if (graph.rowEnd(i) > graph.rowStart(i)) {
            assertTrue(
                o >= lo - 1e-6 && o <= hi + 1e-6,
                "out row " + i + " = " + o + " outside [" + lo + ", " + hi + "], " + where);
          }
        }
      }
      for (float w : got.weights()) {
        assertTrue(w >= 0f && w <= 1f, "weight " + w + ", " + where);
      }
      assertRowsSumToOne(graph, shape.heads(), got.weights(), where);
    }
  }

  // Interface contract (AttentionKernels.checkCall): NaN or an infinity in any input is rejected.
  @Test
  void nonFiniteInputIsRejected() {
    Random random = new Random(0x5EED_000DL);
    int n = 7;
    HeadShape shape = new HeadShape(2, 3, 4);
    CsrGraph graph = randomGraph(random, n, 3);
    float[] q = uniform(random, n * 6, -1f, 1f);
    float[] k = uniform(random, n * 6, -1f, 1f);
    float[] v = uniform(random, n * 8, -1f, 1f);
    float[] out = new float[n * 8];
    ScoreFunction score = ScoreFunction.scaledDotProduct();
    AttentionKernel kernel = kernel(2);
    for (float bad : new float[] {Float.NaN, Float.POSITIVE_INFINITY, Float.NEGATIVE_INFINITY}) {
      float[] q2 = q.clone();
      q2[5] = bad;
      assertThrows(
          IllegalArgumentException.class,
          () -> kernel.attend(graph, score, shape, q2, k, v, out, null),
          "query holding " + bad);
      float[] k2 = k.clone();
      k2[0] = bad;
      assertThrows(
          IllegalArgumentException.class,
          () -> kernel.attend(graph, score, shape, q, k2, v, out, null),
          "key holding " + bad);
      float[] v2 = v.clone();
      v2[v2.length - 1] = bad;
      assertThrows(
          IllegalArgumentException.class,
          () -> kernel.attend(graph, score, shape, q, k, v2, out, null),
          "value holding " + bad);
    }
  }

  // Interface contract (AttentionKernel#attend): lengths must match the pattern and shape.
  @Test
  void wrongLengthsAreRejected() {
    Random random = new Random(0x5EED_000EL);
    int n = 7;
    HeadShape shape = new HeadShape(2, 3, 4);
    CsrGraph graph = randomGraph(random, n, 3);
    float[] q = uniform(random, n * 6, -1f, 1f);
    float[] k = uniform(random, n * 6, -1f, 1f);
    float[] v = uniform(random, n * 8, -1f, 1f);
    float[] out = new float[n * 8];
    ScoreFunction dot = ScoreFunction.scaledDotProduct();
    AttentionKernel kernel = kernel(2);
    float[] shortQ = Arrays.copyOf(q, q.length - 1);
    float[] longK = Arrays.copyOf(k, k.length + 1);
    float[] shortV = Arrays.copyOf(v, v.length - 1);
    float[] shortOut = new float[out.length - 1];
    float[] badWeights = new float[(int) graph.entryCount() * 2 + 1];
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, dot, shape, shortQ, k, v, out, null));
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, dot, shape, q, longK, v, out, null));
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, dot, shape, q, k, shortV, out, null));
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, dot, shape, q, k, v, shortOut, null));
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, dot, shape, q, k, v, out, badWeights));
    // additive scores need keyDim = 1; GATv2's vector must have length heads * keyDim
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(graph, ScoreFunction.additive(0.2f), shape, q, k, v, out, null));
    assertThrows(
        IllegalArgumentException.class,
        () ->
            kernel.attend(
                graph, ScoreFunction.gatv2(0.2f, new float[5]), shape, q, k, v, out, null));
    assertThrows(
        IllegalArgumentException.class,
        () -> kernel.attend(CompletePattern.of(n + 1), dot, shape, q, k, v, out, null));
  }

  // Interface contract (AttentionKernel#attend): query, key and value are not modified.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void inputsAreNotModified(ScoreKind kind) {
    long seed = 0x5EED_000FL + kind.ordinal();
    Random random = new Random(seed);
    for (AttentionPattern pattern : List.of(randomGraph(random, 61, 8), CompletePattern.of(20))) {
      int n = pattern.nodeCount();
      HeadShape shape = shapeFor(kind, 3, 5);
      ScoreFunction score = scoreFor(kind, shape, random);
      float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
      float[] q0 = q.clone();
      float[] k0 = k.clone();
      float[] v0 = v.clone();
      run(kernel(2), pattern, score, shape, q, k, v, true);
      assertArrayEquals(q0, q, "query modified, seed=" + seed);
      assertArrayEquals(k0, k, "key modified, seed=" + seed);
      assertArrayEquals(v0, v, "value modified, seed=" + seed);
    }
  }

  // Multithreaded results must equal single-threaded ones (common practice, as in EJML's tests),
  // bit for bit.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void oneAndFourThreadsGiveIdenticalBits(ScoreKind kind) {
    long seed = 0x5EED_0010L + kind.ordinal();
    Random random = new Random(seed);
    for (AttentionPattern pattern :
        List.of(randomGraph(random, 1000, 30), CompletePattern.of(150))) {
      int n = pattern.nodeCount();
      HeadShape shape = shapeFor(kind, 3, 5);
      ScoreFunction score = scoreFor(kind, shape, random);
      float[] q = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] k = uniform(random, n * shape.keyWidth(), -1f, 1f);
      float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
      Output one = run(kernel(1), pattern, score, shape, q, k, v, true);
      Output four = run(kernel(4), pattern, score, shape, q, k, v, true);
      assertArrayEquals(one.out(), four.out(), pattern + ", " + kind + ", seed=" + seed);
      assertArrayEquals(one.weights(), four.weights(), pattern + ", " + kind + ", seed=" + seed);
    }
  }

  // The overflow contract of AttentionKernel: finite inputs whose float32 scores overflow (here
  // |q|, |k| of 0.6 to 1 times Float.MAX_VALUE) give what float64 gives with each score clamped to
  // the float32 range, on every path: finite outputs, rows of weights summing to one, no exception.
  @ParameterizedTest
  @EnumSource(ScoreKind.class)
  void overflowingScoresFollowTheClampedFloat64Definition(ScoreKind kind) {
    long seed = 0x5EED_0011L + kind.ordinal();
    Random random = new Random(seed);
    for (AttentionPattern pattern : List.of(randomGraph(random, 40, 6), CompletePattern.of(9))) {
      int n = pattern.nodeCount();
      HeadShape shape = shapeFor(kind, 2, 4);
      ScoreFunction score = scoreFor(kind, shape, random);
      float[] q = new float[n * shape.keyWidth()];
      float[] k = new float[n * shape.keyWidth()];
      for (int x = 0; x < q.length; x++) {
        q[x] =
            (random.nextBoolean() ? 1 : -1) * Float.MAX_VALUE * (0.6f + 0.4f * random.nextFloat());
        k[x] =
            (random.nextBoolean() ? 1 : -1) * Float.MAX_VALUE * (0.6f + 0.4f * random.nextFloat());
      }
      float[] v = uniform(random, n * shape.valueWidth(), -1f, 1f);
      String where = describe(pattern, kind, shape, seed);
      for (int threads : new int[] {1, 4}) {
        Output got = run(kernel(threads), pattern, score, shape, q, k, v, true);
        double[] want = clampedReference(pattern, score, shape, q, k, v);
        assertClose(want, got.out(), TOLERANCE, "out, " + threads + " threads, " + where);
        for (float w : got.weights()) {
          assertTrue(w >= 0f && w <= 1f, "weight " + w + ", " + where);
        }
      }
    }
  }

  /** Float64 attention with every score clamped to ±Float.MAX_VALUE (the overflow contract). */
  private static double[] clampedReference(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] q,
      float[] k,
      float[] v) {
    int n = pattern.nodeCount();
    int heads = shape.heads();
    int dv = shape.valueDim();
    double[] out = new double[n * shape.valueWidth()];
    for (int i = 0; i < n; i++) {
      for (int h = 0; h < heads; h++) {
        double max = Double.NEGATIVE_INFINITY;
        double[] e = new double[n];
        for (int j = 0; j < n; j++) {
          if (pattern.allows(i, j)) {
            double raw = ReferenceAttention.score(score, shape, q, k, i, j, h);
            e[j] = Math.max(-Float.MAX_VALUE, Math.min(Float.MAX_VALUE, raw));
            max = Math.max(max, e[j]);
          }
        }
        double sum = 0;
        for (int j = 0; j < n; j++) {
          if (pattern.allows(i, j)) {
            e[j] = Math.exp(e[j] - max);
            sum += e[j];
          }
        }
        for (int j = 0; j < n; j++) {
          if (pattern.allows(i, j)) {
            for (int c = 0; c < dv; c++) {
              out[(i * heads + h) * dv + c] += e[j] / sum * v[(j * heads + h) * dv + c];
            }
          }
        }
      }
    }
    return out;
  }

  // ---------------------------------------------------------------- helpers

  /** Output and weights of one kernel call. */
  protected record Output(float[] out, float[] weights) {}

  /**
   * Runs {@code kernel} with outputs pre-filled with a marker, so a row left unwritten shows.
   *
   * @return the outputs; weights null unless requested
   */
  protected static Output run(
      AttentionKernel kernel,
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] q,
      float[] k,
      float[] v,
      boolean withWeights) {
    float[] out = new float[pattern.nodeCount() * shape.valueWidth()];
    Arrays.fill(out, 1234.5f);
    float[] weights = null;
    if (withWeights) {
      weights = new float[Math.toIntExact(pattern.entryCount() * shape.heads())];
      Arrays.fill(weights, 1234.5f);
    }
    kernel.attend(pattern, score, shape, q, k, v, out, weights);
    return new Output(out, weights);
  }

  /** The head shape used for a score kind: additive scores take keyDim 1. */
  protected static HeadShape shapeFor(ScoreKind kind, int heads, int dim) {
    return new HeadShape(heads, kind == ScoreKind.ADDITIVE ? 1 : dim, dim);
  }

  /** A score function of the given kind; GATv2 gets a random attention vector. */
  protected static ScoreFunction scoreFor(ScoreKind kind, HeadShape shape, Random random) {
    return switch (kind) {
      case ADDITIVE -> ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
      case GATV2 ->
          ScoreFunction.gatv2(
              ScoreFunction.GAT_NEGATIVE_SLOPE, uniform(random, shape.keyWidth(), -1f, 1f));
      case SCALED_DOT_PRODUCT -> ScoreFunction.scaledDotProduct();
    };
  }

  /** Uniform floats in {@code [lo, hi)}. */
  protected static float[] uniform(Random random, int length, float lo, float hi) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = lo + (hi - lo) * random.nextFloat();
    }
    return a;
  }

  /**
   * A random graph: about 15 % of rows isolated, the others with 1 .. 2·averageDegree distinct
   * sorted sources (capped at n).
   */
  protected static CsrGraph randomGraph(Random random, int n, int averageDegree) {
    int[] offsets = new int[n + 1];
    int[] pool = new int[n];
    List<int[]> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      int degree =
          random.nextDouble() < 0.15 ? 0 : 1 + random.nextInt(Math.min(n, 2 * averageDegree));
      for (int x = 0; x < n; x++) {
        pool[x] = x;
      }
      for (int x = 0; x < degree; x++) {
        int y = x + random.nextInt(n - x);
        int t = pool[x];
        pool[x] = pool[y];
        pool[y] = t;
      }
      int[] row = Arrays.copyOf(pool, degree);
      Arrays.sort(row);
      rows.add(row);
      offsets[i + 1] = offsets[i] + degree;
    }
    int[] columns = new int[offsets[n]];
    for (int i = 0; i < n; i++) {
      System.arraycopy(rows.get(i), 0, columns, offsets[i], rows.get(i).length);
    }
    return CsrGraph.of(offsets, columns);
  }

  /** The CSR graph holding every pair (i, j), self included. */
  protected static CsrGraph completeGraph(int n) {
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * n];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = (i + 1) * n;
      for (int j = 0; j < n; j++) {
        columns[i * n + j] = j;
      }
    }
    return CsrGraph.of(offsets, columns);
  }

  private static int[] permutation(Random random, int n) {
    int[] p = new int[n];
    for (int i = 0; i < n; i++) {
      p[i] = i;
    }
    for (int i = n - 1; i > 0; i--) {
      int j = random.nextInt(i + 1);
      int t = p[i];
      p[i] = p[j];
      p[j] = t;
    }
    return p;
  }

  /** The graph with node i renamed perm[i]. */
  private static CsrGraph permute(CsrGraph graph, int[] perm) {
    int n = graph.nodeCount();
    int[][] rows = new int[n][];
    for (int i = 0; i < n; i++) {
      int[] row = new int[graph.rowEnd(i) - graph.rowStart(i)];
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        row[e - graph.rowStart(i)] = perm[graph.column(e)];
      }
      Arrays.sort(row);
      rows[perm[i]] = row;
    }
    int[] offsets = new int[n + 1];
    int[] columns = new int[graph.edgeCount()];
    for (int i = 0; i < n; i++) {
      System.arraycopy(rows[i], 0, columns, offsets[i], rows[i].length);
      offsets[i + 1] = offsets[i] + rows[i].length;
    }
    return CsrGraph.of(offsets, columns);
  }

  /** Moves row i (of the given width) to row perm[i]. */
  private static float[] permuteRows(float[] a, int[] perm, int width) {
    float[] b = new float[a.length];
    for (int i = 0; i < perm.length; i++) {
      System.arraycopy(a, i * width, b, perm[i] * width, width);
    }
    return b;
  }

  private static void assertRowsSumToOne(CsrGraph graph, int heads, float[] w, String where) {
    for (int i = 0; i < graph.nodeCount(); i++) {
      if (graph.rowEnd(i) == graph.rowStart(i)) {
        continue;
      }
      for (int h = 0; h < heads; h++) {
        double sum = 0;
        for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
          sum += w[e * heads + h];
        }
        assertEquals(1.0, sum, TOLERANCE, "row " + i + ", head " + h + ", " + where);
      }
    }
  }

  /** Fails unless the norm-wise relative error of {@code actual} is below {@code tolerance}. */
  protected static void assertClose(
      double[] expected, float[] actual, double tolerance, String where) {
    for (int i = 0; i < actual.length; i++) {
      if (!Float.isFinite(actual[i])) {
        fail("non-finite value " + actual[i] + " at index " + i + ", " + where);
      }
    }
    double error = ReferenceAttention.relativeError(expected, actual);
    assertTrue(error < tolerance, "relative error " + error + " >= " + tolerance + ", " + where);
  }

  private static double[] toDouble(float[] a) {
    double[] d = new double[a.length];
    for (int i = 0; i < a.length; i++) {
      d[i] = a[i];
    }
    return d;
  }

  private static String describe(
      AttentionPattern pattern, ScoreKind kind, HeadShape shape, long seed) {
    return pattern + ", " + kind + ", " + shape + ", seed=" + seed;
  }
}
