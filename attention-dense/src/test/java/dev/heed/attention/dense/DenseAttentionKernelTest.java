package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.concurrent.ExecutorService;
import java.util.concurrent.Executors;
import java.util.concurrent.Future;
import java.util.stream.Stream;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * The dense kernel against the float64 reference ({@link ReferenceAttention}, a plain evaluation of
 * the equations of Vaswani et al. 2017 eq. 1, Veličković et al. 2018 eq. 1-3 and Brody et al.
 * 2022), over awkward sizes, all three score functions, the complete pattern and random CSR masks.
 */
class DenseAttentionKernelTest {

  /** float32 paths must stay well under this norm-wise relative error (project rule). */
  static final double TOLERANCE = 1e-5;

  static final KernelOptions ONE_THREAD = new KernelOptions(1, 64L << 20);

  static AttentionKernel kernel(KernelOptions options) {
    return new DenseAttentionKernelProvider().create(options);
  }

  enum Kind {
    DOT,
    ADDITIVE,
    GATV2
  }

  static ScoreFunction scoreOf(Kind kind, HeadShape shape, Random random) {
    return switch (kind) {
      case DOT -> ScoreFunction.scaledDotProduct();
      case ADDITIVE -> ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
      case GATV2 -> ScoreFunction.gatv2(0.2f, randomArray(random, shape.keyWidth(), 1f));
    };
  }

  static HeadShape shapeOf(Kind kind, int heads, int dim) {
    return new HeadShape(heads, kind == Kind.ADDITIVE ? 1 : dim, dim);
  }

  static float[] randomArray(Random random, int length, float scale) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = (2 * random.nextFloat() - 1) * scale;
    }
    return a;
  }

  /** Random CSR mask: each pair with probability {@code density}; every 5th row left empty. */
  static CsrGraph randomMask(Random random, int n, double density) {
    int[] offsets = new int[n + 1];
    List<Integer> columns = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      if (i % 5 != 4) {
        for (int j = 0; j < n; j++) {
          if (random.nextDouble() < density) {
            columns.add(j);
          }
        }
      }
      offsets[i + 1] = columns.size();
    }
    return CsrGraph.of(offsets, columns.stream().mapToInt(Integer::intValue).toArray());
  }

  /** Runs the kernel and the reference on fresh random data; checks output and weights. */
  static void checkAgainstReference(
      AttentionKernel kernel, AttentionPattern pattern, Kind kind, int heads, int dim, long seed) {
    Random random = new Random(seed);
    HeadShape shape = shapeOf(kind, heads, dim);
    ScoreFunction score = scoreOf(kind, shape, random);
    int n = pattern.nodeCount();
    float[] query = randomArray(random, n * shape.keyWidth(), 1f);
    float[] key = randomArray(random, n * shape.keyWidth(), 1f);
    float[] value = randomArray(random, n * shape.valueWidth(), 1f);
    float[] out = new float[n * shape.valueWidth()];
    float[] weights = new float[(int) (pattern.entryCount() * heads)];
    kernel.attend(pattern, score, shape, query, key, value, out, weights);

    // Float64 evaluation of the equations (ReferenceAttention; Vaswani 2017 eq. 1, GAT eq. 1-3).
    ReferenceAttention.Result expected =
        ReferenceAttention.attend(pattern, score, shape, query, key, value);
    String where = pattern + " " + score + " " + shape + " seed " + seed;
    double outError = ReferenceAttention.relativeError(expected.out(), out);
    assertTrue(outError < TOLERANCE, "output relative error " + outError + " for " + where);
    double weightError = ReferenceAttention.relativeError(expected.weights(), weights);
    assertTrue(weightError < TOLERANCE, "weight relative error " + weightError + " for " + where);
  }

  static Stream<Arguments> sizes() {
    List<Arguments> cases = new ArrayList<>();
    long seed = 1000;
    int[][] sizes = {{1, 1, 1}, {2, 3, 5}, {7, 8, 1}, {61, 8, 64}, {61, 3, 5}, {1000, 3, 5}};
    for (int[] size : sizes) {
      for (Kind kind : Kind.values()) {
        for (boolean masked : new boolean[] {false, true}) {
          cases.add(Arguments.of(size[0], size[1], size[2], kind, masked, seed++));
        }
      }
    }
    return cases.stream();
  }

  // Reference for the three routes below: ReferenceAttention (float64 evaluation of Vaswani et al.
  // 2017 eq. 1, Veličković et al. 2018 eq. 1-3, Brody et al. 2022).

  @ParameterizedTest(name = "n={0} heads={1} dim={2} {3} masked={4}")
  @MethodSource("sizes")
  void matchesFloat64Reference(int n, int heads, int dim, Kind kind, boolean masked, long seed) {
    // The default route: the Vector API softmax where the JVM reads it (the build's test JVM does)
    checkAgainstReference(kernel(ONE_THREAD), pattern(n, masked, seed), kind, heads, dim, seed);
  }

  @ParameterizedTest(name = "n={0} heads={1} dim={2} {3} masked={4}")
  @MethodSource("sizes")
  void shiftedSoftmaxRouteMatchesFloat64Reference(
      int n, int heads, int dim, Kind kind, boolean masked, long seed) {
    // Without the Vector API, with the row maximum always subtracted (ND4J's native softmax): the
    // route taken when scores could exceed UNSHIFTED_EXP_LIMIT.
    AttentionKernel shifted = nd4jRouteKernel(-1.0);
    checkAgainstReference(shifted, pattern(n, masked, seed), kind, heads, dim, seed + 500);
  }

  @ParameterizedTest(name = "n={0} heads={1} dim={2} {3} masked={4}")
  @MethodSource("sizes")
  void nd4jExpRouteMatchesFloat64Reference(
      int n, int heads, int dim, Kind kind, boolean masked, long seed) {
    // Without the Vector API: ND4J's Exp without the row maximum where the norm bound allows it,
    // else ND4J's softmax.
    AttentionKernel nd4jRoute = nd4jRouteKernel(DenseAttentionKernel.UNSHIFTED_EXP_LIMIT);
    checkAgainstReference(nd4jRoute, pattern(n, masked, seed), kind, heads, dim, seed + 900);
  }

  private static AttentionPattern pattern(int n, boolean masked, long seed) {
    return masked ? randomMask(new Random(seed ^ 0x5eed), n, 0.3) : CompletePattern.of(n);
  }

  private static AttentionKernel nd4jRouteKernel(double unshiftedExpLimit) {
    return new DenseAttentionKernel(
        ONE_THREAD,
        DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
        DenseBlockPlan.MIN_TARGET_ROWS,
        unshiftedExpLimit,
        null);
  }

  @Test
  void vectorSoftmaxRunsWhereTheBuildExpectsIt() {
    // The build passes --add-modules jdk.incubator.vector and this property to the test JVM; if
    // the kernel fell back to ND4J's exponential there, the tests above would not have covered the
    // route users get.
    if (Boolean.getBoolean("heed.test.expectVectorSoftmax")) {
      assertTrue(RowSoftmaxes.preferred() != null, "the Vector API softmax was not chosen");
      String description = kernel(ONE_THREAD).describe();
      assertTrue(description.contains("Java vector"), description);
    }
  }

  @ParameterizedTest(name = "{0}")
  @MethodSource("kinds")
  void blockBoundariesDoNotMatter(Kind kind) {
    // 61 rows in blocks of 7 (8 full blocks and a tail of 5) must equal the reference
    // (ReferenceAttention, float64 evaluation of the equations).
    int n = 61;
    AttentionKernel small =
        new DenseAttentionKernel(
            ONE_THREAD,
            7L * n,
            1,
            DenseAttentionKernel.UNSHIFTED_EXP_LIMIT,
            RowSoftmaxes.preferred());
    checkAgainstReference(small, CompletePattern.of(n), kind, 3, 5, 77);
    checkAgainstReference(small, randomMask(new Random(78), n, 0.2), kind, 3, 5, 79);
  }

  @ParameterizedTest(name = "{0}")
  @MethodSource("kinds")
  void splitCallsMatchFloat64ReferenceWithShortBlocksAndATail(Kind kind) {
    // n = 1100 is a large call: with dot-product or additive scores and a process of two or more
    // BLAS threads it is split, each thread taking blocks of 7 rows in turn (157 full blocks and a
    // tail of 1); GATv2 takes the shared path. Outputs and weights must equal the reference
    // (ReferenceAttention, float64 evaluation of the equations).
    int n = 1100;
    AttentionKernel shortBlocks =
        new DenseAttentionKernel(
            new KernelOptions(2, 64L << 20),
            DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
            7L * n,
            0,
            1,
            DenseAttentionKernel.UNSHIFTED_EXP_LIMIT,
            RowSoftmaxes.preferred());
    checkAgainstReference(shortBlocks, CompletePattern.of(n), kind, 3, 5, 81);
    checkAgainstReference(shortBlocks, randomMask(new Random(82), n, 0.2), kind, 3, 5, 83);
  }

  static Stream<Kind> kinds() {
    return Stream.of(Kind.values());
  }

  @Test
  void budgetLimitsTheBlockHeightAndResultsStayExact() {
    // A budget that fits the packed inputs plus 13 rows: n = 1100 gives blocks of 13 with a tail.
    int n = 1100;
    HeadShape shape = new HeadShape(1, 128, 128);
    DenseBlockPlan unconstrained =
        DenseBlockPlan.of(
            n,
            ScoreFunction.scaledDotProduct(),
            shape,
            false,
            1,
            Long.MAX_VALUE,
            DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
            DenseBlockPlan.MIN_TARGET_ROWS);
    long budget = unconstrained.fixedBytes() + 13 * unconstrained.bytesPerBlockRow() + 3;
    DenseBlockPlan plan =
        DenseBlockPlan.of(
            n,
            ScoreFunction.scaledDotProduct(),
            shape,
            false,
            1,
            budget,
            DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
            DenseBlockPlan.MIN_TARGET_ROWS);
    assertEquals(13, plan.blockRows());
    assertTrue(plan.bytesUsed() <= budget);
    assertTrue(budget >= 1L << 20, "budget below the 1 MiB minimum: " + budget);
    AttentionKernel kernel = kernel(new KernelOptions(1, budget));
    // Reference: ReferenceAttention (float64 evaluation of Vaswani et al. 2017, eq. 1).
    checkAgainstReference(kernel, CompletePattern.of(n), Kind.DOT, 1, 128, 31);
  }

  @Test
  void refusesWhatCannotFitTheBudgetAndSaysWhy() {
    int n = 4096;
    HeadShape shape = new HeadShape(1, 64, 64);
    long budget = 1L << 20;
    AttentionKernel kernel = kernel(new KernelOptions(1, budget));
    Random random = new Random(4096);
    float[] q = randomArray(random, n * 64, 1f);
    float[] k = randomArray(random, n * 64, 1f);
    float[] v = randomArray(random, n * 64, 1f);
    float[] out = new float[n * 64];
    MemoryBudgetExceededException e =
        assertThrows(
            MemoryBudgetExceededException.class,
            () ->
                kernel.attend(
                    CompletePattern.of(n),
                    ScoreFunction.scaledDotProduct(),
                    shape,
                    q,
                    k,
                    v,
                    out,
                    null));
    // Packed Q, K: 2 · n · 64 floats, V with a ones column: n · 65; a Java row of n; a one-row
    // block: a score row of n, an output row of 65 and its row sum.
    long expected = 4L * (2L * n * 64 + n * 65L + n) + 4L * (n + 65 + 1);
    assertEquals(expected, e.bytesNeeded());
    assertEquals(budget, e.budgetBytes());
    String m = e.getMessage();
    assertTrue(m.contains(Long.toString(expected)), m);
    assertTrue(m.contains(Long.toString(budget)), m);
    assertTrue(m.contains("sparse"), m);
    assertTrue(m.contains("denseMemoryBudgetBytes"), m);
    assertTrue(m.contains("n = 4096"), m);
  }

  @Test
  void isolatedRowsGiveZeroOutputAndOtherRowsWeightsSumToOne() {
    // Rows without allowed sources give zero (AttentionKernel contract); each row's weights sum
    // to 1 (softmax normalisation, common practice).
    Random random = new Random(5);
    int n = 40;
    CsrGraph mask = randomMask(random, n, 0.25);
    for (Kind kind : Kind.values()) {
      HeadShape shape = shapeOf(kind, 3, 6);
      ScoreFunction score = scoreOf(kind, shape, random);
      float[] q = randomArray(random, n * shape.keyWidth(), 2f);
      float[] k = randomArray(random, n * shape.keyWidth(), 2f);
      float[] v = randomArray(random, n * shape.valueWidth(), 2f);
      float[] out = randomArray(random, n * shape.valueWidth(), 1f); // overwritten
      float[] w = new float[mask.edgeCount() * 3];
      kernel(ONE_THREAD).attend(mask, score, shape, q, k, v, out, w);
      for (int i = 0; i < n; i++) {
        if (mask.degree(i) == 0) {
          for (int c = 0; c < shape.valueWidth(); c++) {
            assertEquals(0f, out[i * shape.valueWidth() + c], "row " + i + " " + kind);
          }
        } else {
          for (int h = 0; h < 3; h++) {
            double sum = 0;
            for (int e = mask.rowStart(i); e < mask.rowEnd(i); e++) {
              sum += w[e * 3 + h];
            }
            assertEquals(1.0, sum, 1e-5, "row " + i + " head " + h + " " + kind);
          }
        }
      }
    }
  }

  @Test
  void allRowsEmptyGivesZeros() {
    int n = 9;
    CsrGraph empty = CsrGraph.of(new int[n + 1], new int[0]);
    HeadShape shape = new HeadShape(2, 3, 3);
    Random random = new Random(9);
    float[] out = randomArray(random, n * 6, 1f);
    kernel(ONE_THREAD)
        .attend(
            empty,
            ScoreFunction.scaledDotProduct(),
            shape,
            randomArray(random, n * 6, 1f),
            randomArray(random, n * 6, 1f),
            randomArray(random, n * 6, 1f),
            out,
            new float[0]);
    assertArrayEquals(new float[n * 6], out);
  }

  @Test
  void emptyPatternIsANoOp() {
    float[] none = new float[0];
    kernel(ONE_THREAD)
        .attend(
            CompletePattern.of(0),
            ScoreFunction.scaledDotProduct(),
            new HeadShape(2, 3, 3),
            none,
            none,
            none,
            none,
            null);
  }

  @Test
  void inputsAreNotModifiedAndRepeatedCallsAreBitIdentical() {
    for (Kind kind : Kind.values()) {
      Random random = new Random(11);
      int n = 53;
      HeadShape shape = shapeOf(kind, 4, 7);
      ScoreFunction score = scoreOf(kind, shape, random);
      AttentionPattern[] patterns = {CompletePattern.of(n), randomMask(random, n, 0.4)};
      for (AttentionPattern pattern : patterns) {
        float[] q = randomArray(random, n * shape.keyWidth(), 1f);
        float[] k = randomArray(random, n * shape.keyWidth(), 1f);
        float[] v = randomArray(random, n * shape.valueWidth(), 1f);
        float[] q0 = q.clone();
        float[] k0 = k.clone();
        float[] v0 = v.clone();
        float[] out1 = new float[n * shape.valueWidth()];
        float[] out2 = new float[n * shape.valueWidth()];
        AttentionKernel kernel = kernel(ONE_THREAD);
        kernel.attend(pattern, score, shape, q, k, v, out1, null);
        kernel.attend(pattern, score, shape, q, k, v, out2, null);
        assertArrayEquals(q0, q, "query modified, " + kind);
        assertArrayEquals(k0, k, "key modified, " + kind);
        assertArrayEquals(v0, v, "value modified, " + kind);
        assertArrayEquals(out1, out2, "repeated call differs, " + kind);
      }
    }
  }

  @Test
  void gatv2ScoreThreadsGiveBitIdenticalResults() {
    // Multithreaded results are compared with single-threaded ones (common practice, as in EJML's
    // tests).
    Random random = new Random(21);
    int n = 300;
    HeadShape shape = new HeadShape(2, 8, 8);
    ScoreFunction score = scoreOf(Kind.GATV2, shape, random);
    float[] q = randomArray(random, n * 16, 1f);
    float[] k = randomArray(random, n * 16, 1f);
    float[] v = randomArray(random, n * 16, 1f);
    for (AttentionPattern pattern :
        new AttentionPattern[] {CompletePattern.of(n), randomMask(random, n, 0.5)}) {
      float[] single = new float[n * 16];
      float[] multi = new float[n * 16];
      kernel(ONE_THREAD).attend(pattern, score, shape, q, k, v, single, null);
      kernel(new KernelOptions(3, 64L << 20)).attend(pattern, score, shape, q, k, v, multi, null);
      assertArrayEquals(single, multi, pattern.toString());
    }
  }

  @ParameterizedTest(name = "{0}")
  @MethodSource("kinds")
  void softmaxThreadsGiveBitIdenticalResultsAndMatchFloat64(Kind kind) {
    // n = 1100: a block's rows·n passes the threshold for splitting the Java softmax over threads,
    // and 3 threads leave a short last range. Multithreaded results are compared with
    // single-threaded ones (common practice, as in EJML's tests) and with the float64 reference
    // (ReferenceAttention).
    Random random = new Random(22 + kind.ordinal());
    int n = 1100;
    HeadShape shape = new HeadShape(2, kind == Kind.ADDITIVE ? 1 : 8, 8);
    ScoreFunction score = scoreOf(kind, shape, random);
    float[] q = randomArray(random, n * shape.keyWidth(), 1f);
    float[] k = randomArray(random, n * shape.keyWidth(), 1f);
    float[] v = randomArray(random, n * shape.valueWidth(), 1f);
    for (AttentionPattern pattern :
        new AttentionPattern[] {CompletePattern.of(n), randomMask(random, n, 0.5)}) {
      float[] single = new float[n * shape.valueWidth()];
      float[] multi = new float[n * shape.valueWidth()];
      kernel(ONE_THREAD).attend(pattern, score, shape, q, k, v, single, null);
      kernel(new KernelOptions(3, 64L << 20)).attend(pattern, score, shape, q, k, v, multi, null);
      assertArrayEquals(single, multi, pattern.toString());
      double error =
          ReferenceAttention.relativeError(
              ReferenceAttention.attend(pattern, score, shape, q, k, v).out(), multi);
      assertTrue(error < TOLERANCE, "relative error " + error + " for " + pattern);
    }
  }

  @Test
  void concurrentCallersGetTheSameResults() throws Exception {
    Random random = new Random(31);
    int n = 120;
    HeadShape shape = new HeadShape(4, 16, 16);
    float[] q = randomArray(random, n * 64, 1f);
    float[] k = randomArray(random, n * 64, 1f);
    float[] v = randomArray(random, n * 64, 1f);
    AttentionKernel kernel = kernel(ONE_THREAD);
    CompletePattern pattern = CompletePattern.of(n);
    float[] expected = new float[n * 64];
    kernel.attend(pattern, ScoreFunction.scaledDotProduct(), shape, q, k, v, expected, null);
    ExecutorService pool = Executors.newFixedThreadPool(4);
    try {
      List<Future<float[]>> results = new ArrayList<>();
      for (int t = 0; t < 8; t++) {
        results.add(
            pool.submit(
                () -> {
                  float[] out = new float[n * 64];
                  kernel.attend(
                      pattern, ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);
                  return out;
                }));
      }
      for (Future<float[]> f : results) {
        assertArrayEquals(expected, f.get());
      }
    } finally {
      pool.shutdownNow();
    }
  }

  @Test
  void largeScoresDoNotOverflow() {
    // Softmax is shift-invariant; subtracting the row maximum keeps exp finite (common practice).
    for (Kind kind : Kind.values()) {
      Random random = new Random(41);
      int n = 30;
      HeadShape shape = shapeOf(kind, 2, 16);
      ScoreFunction score = scoreOf(kind, shape, random);
      float[] q = randomArray(random, n * shape.keyWidth(), 30f);
      float[] k = randomArray(random, n * shape.keyWidth(), 30f);
      float[] v = randomArray(random, n * shape.valueWidth(), 1f);
      float[] out = new float[n * shape.valueWidth()];
      kernel(ONE_THREAD).attend(CompletePattern.of(n), score, shape, q, k, v, out, null);
      ReferenceAttention.Result expected =
          ReferenceAttention.attend(CompletePattern.of(n), score, shape, q, k, v);
      double error = ReferenceAttention.relativeError(expected.out(), out);
      // Scores reach ~|e| = 1000 here; float32 scores carry ~1e-4 absolute error, so the
      // bound is looser than TOLERANCE, but the result must be finite and close.
      assertTrue(error < 1e-3, kind + " error " + error);
    }
  }

  @Test
  void repeatedCallsDoNotGrowOffHeapMemory() {
    // Each call allocates about 4 MB of ND4J scratch (n = 1024: a 1024 × 1024 score block) and
    // closes it; without close() the scratch would stay until a garbage collection
    // (measured), and 60 calls would add about 250 MB of resident memory.
    int n = 1024;
    HeadShape shape = new HeadShape(1, 8, 8);
    Random random = new Random(61);
    float[] q = randomArray(random, n * 8, 1f);
    float[] k = randomArray(random, n * 8, 1f);
    float[] v = randomArray(random, n * 8, 1f);
    float[] out = new float[n * 8];
    AttentionKernel kernel = kernel(ONE_THREAD);
    CompletePattern pattern = CompletePattern.of(n);
    for (int call = 0; call < 5; call++) {
      kernel.attend(pattern, ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);
    }
    long before = org.bytedeco.javacpp.Pointer.physicalBytes();
    for (int call = 0; call < 60; call++) {
      kernel.attend(pattern, ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);
    }
    long grown = org.bytedeco.javacpp.Pointer.physicalBytes() - before;
    assertTrue(grown < 100L << 20, "resident memory grew by " + (grown >> 20) + " MiB");
  }

  /** The complete graph on n nodes as an explicit CSR graph (every row 0..n-1). */
  static CsrGraph completeCsr(int n) {
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

  static double relativeError(float[] expected, float[] actual) {
    double maxDiff = 0;
    double maxRef = 0;
    for (int i = 0; i < expected.length; i++) {
      maxDiff = Math.max(maxDiff, Math.abs(expected[i] - actual[i]));
      maxRef = Math.max(maxRef, Math.abs(expected[i]));
    }
    return maxDiff / maxRef;
  }

  @Test
  void completeCsrMaskEqualsTheCompletePattern() {
    // Self-attention is graph attention over the complete graph (common
    // practice): the masked route over an all-ones CSR graph must give the unmasked result, and
    // its CSR entry order is the complete pattern's row-major order, so the weights match too.
    int n = 37;
    for (Kind kind : Kind.values()) {
      Random random = new Random(71);
      HeadShape shape = shapeOf(kind, 3, 9);
      ScoreFunction score = scoreOf(kind, shape, random);
      float[] q = randomArray(random, n * shape.keyWidth(), 1f);
      float[] k = randomArray(random, n * shape.keyWidth(), 1f);
      float[] v = randomArray(random, n * shape.valueWidth(), 1f);
      float[] outComplete = new float[n * shape.valueWidth()];
      float[] outCsr = new float[n * shape.valueWidth()];
      float[] wComplete = new float[n * n * 3];
      float[] wCsr = new float[n * n * 3];
      AttentionKernel kernel = kernel(ONE_THREAD);
      kernel.attend(CompletePattern.of(n), score, shape, q, k, v, outComplete, wComplete);
      kernel.attend(completeCsr(n), score, shape, q, k, v, outCsr, wCsr);
      assertTrue(relativeError(outComplete, outCsr) < 1e-6, kind + " output");
      assertTrue(relativeError(wComplete, wCsr) < 1e-6, kind + " weights");
    }
  }

  @Test
  void renumberingNodesRenumbersOutputs() {
    // Attention is permutation-equivariant (common practice): node p(i) of the
    // permuted input gets node i's output.
    int n = 45;
    Random random = new Random(81);
    int[] perm = new int[n];
    for (int i = 0; i < n; i++) {
      perm[i] = i;
    }
    for (int i = n - 1; i > 0; i--) {
      int j = random.nextInt(i + 1);
      int t = perm[i];
      perm[i] = perm[j];
      perm[j] = t;
    }
    for (Kind kind : Kind.values()) {
      HeadShape shape = shapeOf(kind, 2, 6);
      ScoreFunction score = scoreOf(kind, shape, random);
      int kw = shape.keyWidth();
      int vw = shape.valueWidth();
      float[] q = randomArray(random, n * kw, 1f);
      float[] k = randomArray(random, n * kw, 1f);
      float[] v = randomArray(random, n * vw, 1f);
      float[] pq = new float[n * kw];
      float[] pk = new float[n * kw];
      float[] pv = new float[n * vw];
      for (int i = 0; i < n; i++) {
        System.arraycopy(q, i * kw, pq, perm[i] * kw, kw);
        System.arraycopy(k, i * kw, pk, perm[i] * kw, kw);
        System.arraycopy(v, i * vw, pv, perm[i] * vw, vw);
      }
      float[] out = new float[n * vw];
      float[] permutedOut = new float[n * vw];
      AttentionKernel kernel = kernel(ONE_THREAD);
      kernel.attend(CompletePattern.of(n), score, shape, q, k, v, out, null);
      kernel.attend(CompletePattern.of(n), score, shape, pq, pk, pv, permutedOut, null);
      float[] back = new float[n * vw];
      for (int i = 0; i < n; i++) {
        System.arraycopy(permutedOut, perm[i] * vw, back, i * vw, vw);
      }
      double error = relativeError(out, back);
      assertTrue(error < 1e-5, kind + " error " + error);
    }
  }

  @ParameterizedTest(name = "value scale {0}")
  @org.junit.jupiter.params.provider.ValueSource(doubles = {1e-25, 1e16})
  void extremeValueMagnitudesStayAccurate(double valueScale) {
    // |scores| between 49 and 59.3 (q, k in [7, 7.7], one dimension, scale 1) pass the plain
    // score limit of 60; but values of magnitude 1e-25 times weights near e^-59 underflow, and
    // values of 1e16 times weights near e^59 overflow the sums. The result must still match the
    // float64 reference (ReferenceAttention, Vaswani et al. 2017, eq. 1) at the usual tolerance.
    int n = 100;
    HeadShape shape = new HeadShape(1, 1, 4);
    Random random = new Random(91);
    float[] q = new float[n];
    float[] k = new float[n];
    for (int i = 0; i < n; i++) {
      q[i] = (i % 2 == 0 ? 1 : -1) * (7f + 0.7f * random.nextFloat());
      k[i] = 7f + 0.7f * random.nextFloat();
    }
    float[] v = randomArray(random, n * 4, (float) valueScale);
    float[] out = new float[n * 4];
    kernel(ONE_THREAD)
        .attend(CompletePattern.of(n), ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);
    ReferenceAttention.Result expected =
        ReferenceAttention.attend(
            CompletePattern.of(n), ScoreFunction.scaledDotProduct(), shape, q, k, v);
    double error = ReferenceAttention.relativeError(expected.out(), out);
    assertTrue(error < TOLERANCE, "value scale " + valueScale + ": relative error " + error);
  }

  @Test
  void foundThroughServiceLoaderAsTheDensePath() {
    AttentionKernel kernel = AttentionKernels.forPath(ComputePath.DENSE, ONE_THREAD);
    assertEquals(ComputePath.DENSE, kernel.path());
    assertTrue(kernel.describe().startsWith("dense"), kernel.describe());
    assertEquals(DenseAttentionKernel.class, kernel.getClass());
  }

  @Test
  void validatesThroughTheFrontDoor() {
    AttentionKernel kernel = kernel(ONE_THREAD);
    HeadShape shape = new HeadShape(1, 2, 2);
    float[] bad = {1f, Float.NaN, 0f, 0f};
    float[] ok = {1f, 2f, 3f, 4f};
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                kernel.attend(
                    CompletePattern.of(2),
                    ScoreFunction.scaledDotProduct(),
                    shape,
                    bad,
                    ok,
                    ok,
                    new float[4],
                    null));
    assertTrue(e.getMessage().contains("query"), e.getMessage());
  }
}
