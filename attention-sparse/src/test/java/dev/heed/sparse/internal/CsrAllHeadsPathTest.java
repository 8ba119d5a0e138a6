package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assertions.fail;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.AttentionKernels;
import dev.heed.attention.HeadShape;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The all-heads path (additive scores, 8 heads of 8 value floats): it is really taken, matches the
 * float64 reference (Veličković et al. 2018, eqs. 1-4), gives identical bits for 1 to 3 threads,
 * agrees with the per-head path, reads the node table's exact layout with the same bits as the
 * caller's arrays, computes the table's factored weights to within rounding of the exact softmax
 * (falling back to it where they underflow), and its vector methods equal the scalar reference
 * forms bit for bit.
 */
class CsrAllHeadsPathTest {

  private static final HeadShape SHAPE = new HeadShape(8, 1, 8);
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);

  /** Rows of 0 to 20 distinct sources, plus rows longer than one block (up to 2.5 blocks). */
  static CsrGraph graph(Random random, int n) {
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * (CsrPass.BLOCK * 3)];
    int e = 0;
    for (int i = 0; i < n; i++) {
      int degree =
          i % 17 == 5 ? CsrPass.BLOCK + random.nextInt(CsrPass.BLOCK * 3 / 2) : random.nextInt(21);
      int[] row = random.ints(0, n).distinct().limit(Math.min(degree, n)).sorted().toArray();
      System.arraycopy(row, 0, columns, e, row.length);
      e += row.length;
      offsets[i + 1] = e;
    }
    return CsrGraph.of(offsets, Arrays.copyOf(columns, e));
  }

  private record Run(float[] out, float[] weights) {}

  private static Run run(
      AttentionPattern pattern,
      RowMath math,
      int threads,
      boolean allHeads,
      float[] q,
      float[] k,
      float[] v) {
    return run(
        new CsrAttentionKernel(
            threads, math, CsrKernelVariant.DEFAULT.withMinCostPerThread(1).withAllHeads(allHeads)),
        pattern,
        true,
        q,
        k,
        v);
  }

  /** One call; {@code withWeights = false} leaves the weights array null and returns it so. */
  private static Run run(
      CsrAttentionKernel kernel,
      AttentionPattern pattern,
      boolean withWeights,
      float[] q,
      float[] k,
      float[] v) {
    float[] out = new float[pattern.nodeCount() * SHAPE.valueWidth()];
    float[] weights =
        withWeights ? new float[Math.toIntExact(pattern.entryCount() * SHAPE.heads())] : null;
    kernel.attend(pattern, GAT, SHAPE, q, k, v, out, weights);
    return new Run(out, weights);
  }

  /** A kernel that uses the node table for every graph (or never), in its default layout. */
  private static CsrAttentionKernel packing(int threads, boolean packed) {
    return new CsrAttentionKernel(
        threads,
        RowMaths.preferred(),
        CsrKernelVariant.DEFAULT
            .withMinCostPerThread(1)
            .withMinPackedTableBytes(packed ? 0 : Long.MAX_VALUE));
  }

  /** A kernel that uses the node table for every graph, in its factored or its exact layout. */
  private static CsrAttentionKernel packing(int threads, boolean packed, boolean factored) {
    return packing(threads, packed, factored, CsrKernelVariant.DEFAULT.nodeRows());
  }

  /** As {@link #packing(int, boolean, boolean)}, with the given node-row precision. */
  static CsrAttentionKernel packing(
      int threads, boolean packed, boolean factored, NodeRowPrecision rows) {
    return new CsrAttentionKernel(
        threads,
        RowMaths.preferred(),
        CsrKernelVariant.DEFAULT
            .withMinCostPerThread(1)
            .withMinPackedTableBytes(packed ? 0 : Long.MAX_VALUE)
            .withFactoredWeights(factored)
            .withNodeRows(rows));
  }

  @Test
  void pathIsTakenOnlyForItsShape() {
    assertFalse(
        allHeadsKernel(RowMaths.scalar(), true).takesAllHeadsPath(GAT, SHAPE),
        "the scalar loops are slower on the all-heads path");
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    for (RowMath math : List.of(vector)) {
      assertTrue(allHeadsKernel(math, true).takesAllHeadsPath(GAT, SHAPE));
      assertFalse(allHeadsKernel(math, false).takesAllHeadsPath(GAT, SHAPE));
      assertFalse(allHeadsKernel(math, true).takesAllHeadsPath(GAT, new HeadShape(8, 1, 4)));
      assertFalse(
          allHeadsKernel(math, true)
              .takesAllHeadsPath(ScoreFunction.scaledDotProduct(), new HeadShape(8, 8, 8)));
    }
  }

  private static CsrAttentionKernel allHeadsKernel(RowMath math, boolean allHeads) {
    return new CsrAttentionKernel(1, math, CsrKernelVariant.DEFAULT.withAllHeads(allHeads));
  }

  @Test
  void matchesReferenceAndIsBitIdenticalAcrossThreads() {
    long seed = 0xA11E4DL;
    Random random = new Random(seed);
    int n = 700;
    CsrGraph graph = graph(random, n);
    // scores of a few units: the softmax maxima move between blocks, so rescaling is exercised
    float[] q = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    ReferenceAttention.Result want = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, v);
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    Run first = null;
    for (RowMath math : List.of(vector)) {
      String where = math.name() + ", seed=" + seed;
      Run perHead = run(graph, RowMaths.scalar(), 1, false, q, k, v);
      for (int threads = 1; threads <= 3; threads++) {
        Run got = run(graph, math, threads, true, q, k, v);
        if (first == null) {
          first = got;
          double error = ReferenceAttention.relativeError(want.out(), got.out());
          assertTrue(error < 1e-5, where + ": out relative error " + error);
          double weightError = ReferenceAttention.relativeError(want.weights(), got.weights());
          assertTrue(weightError < 1e-5, where + ": weights relative error " + weightError);
        } else {
          // the same operations in the same order for every thread count
          assertArrayEquals(first.out(), got.out(), where + ", " + threads + " threads");
          assertArrayEquals(first.weights(), got.weights(), where + ", " + threads + " threads");
        }
      }
      double apart = relativeError(perHead.out(), first.out());
      assertTrue(apart < 1e-5, where + ": per-head and all-heads paths differ by " + apart);
    }
  }

  // The node table's exact layout changes only where the kernel reads keys and values from, not
  // the arithmetic: outputs and weights equal the unpacked path bit for bit. The factored layout
  // (the default, CsrRowPass) does other operations on the same values, so its outputs and weights
  // must match the float64 reference (Veličković et al. 2018, eqs. 1-4) within 1e-5 and the exact
  // path within 1e-6; they must be identical for 1 to 3 threads, on a second call that reuses the
  // spare table, and with and without weights asked for.
  @Test
  void packedNodeTableMatchesTheUnpackedPath() {
    long seed = 0x9AC4EDL;
    Random random = new Random(seed);
    int n = 700;
    CsrGraph graph = graph(random, n);
    float[] q = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    float[] k0 = k.clone();
    float[] v0 = v.clone();
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    ReferenceAttention.Result reference = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, v);
    Run factored = null;
    for (int threads = 1; threads <= 3; threads++) {
      String where = threads + " threads, seed=" + seed;
      Run unpacked = run(packing(threads, false), graph, true, q, k, v);
      CsrAttentionKernel exact = packing(threads, true, false);
      CsrAttentionKernel factoring = packing(threads, true, true);
      for (int call = 0; call < 2; call++) {
        Run got = run(exact, graph, true, q, k, v);
        assertArrayEquals(unpacked.out(), got.out(), where + ", exact layout, call " + call);
        assertArrayEquals(unpacked.weights(), got.weights(), where + ", exact, call " + call);
        assertArrayEquals(
            unpacked.out(), run(exact, graph, false, q, k, v).out(), where + ", exact, no weights");
        got = run(factoring, graph, true, q, k, v);
        if (factored == null) {
          factored = got;
          double error = ReferenceAttention.relativeError(reference.out(), got.out());
          assertTrue(error < 1e-5, where + ": factored out, relative error " + error);
          error = ReferenceAttention.relativeError(reference.weights(), got.weights());
          assertTrue(error < 1e-5, where + ": factored weights, relative error " + error);
          double apart = relativeError(unpacked.out(), got.out());
          assertTrue(apart < 1e-6, where + ": factored and exact outputs differ by " + apart);
          apart = relativeError(unpacked.weights(), got.weights());
          assertTrue(apart < 1e-6, where + ": factored and exact weights differ by " + apart);
        } else {
          assertArrayEquals(factored.out(), got.out(), where + ", factored, call " + call);
          assertArrayEquals(factored.weights(), got.weights(), where + ", factored, call " + call);
        }
        assertArrayEquals(
            factored.out(),
            run(factoring, graph, false, q, k, v).out(),
            where + ", factored, no weights, call " + call);
      }
    }
    assertArrayEquals(k0, k, "the kernel must not modify key");
    assertArrayEquals(v0, v, "the kernel must not modify value");
  }

  // Kernel contract: concurrent calls on one kernel are safe. With the packed table, each call must
  // get a table of its own (the spare goes to one call at a time), or calls would read each
  // other's keys and values. Four threads, each with its own inputs, ten calls each.
  @Test
  void concurrentCallsOnOneKernelDoNotShareATable() throws Exception {
    long seed = 0x9AC4F0L;
    Random random = new Random(seed);
    int n = 400;
    CsrGraph graph = graph(random, n);
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    int callers = 4;
    float[][][] inputs = new float[callers][][];
    float[][] want = new float[callers][];
    for (int c = 0; c < callers; c++) {
      inputs[c] =
          new float[][] {
            uniform(random, n * SHAPE.keyWidth(), -4f, 4f),
            uniform(random, n * SHAPE.keyWidth(), -4f, 4f),
            uniform(random, n * SHAPE.valueWidth(), -1f, 1f)
          };
      want[c] = run(packing(1, true), graph, false, inputs[c][0], inputs[c][1], inputs[c][2]).out();
    }
    CsrAttentionKernel shared = packing(2, true);
    java.util.concurrent.ExecutorService pool =
        java.util.concurrent.Executors.newFixedThreadPool(callers);
    try {
      List<java.util.concurrent.Future<String>> results = new java.util.ArrayList<>();
      for (int c = 0; c < callers; c++) {
        int caller = c;
        results.add(
            pool.submit(
                () -> {
                  float[][] in = inputs[caller];
                  for (int call = 0; call < 10; call++) {
                    float[] got = run(shared, graph, false, in[0], in[1], in[2]).out();
                    if (!Arrays.equals(want[caller], got)) {
                      return "caller " + caller + ", call " + call + " got another result";
                    }
                  }
                  return "";
                }));
      }
      for (java.util.concurrent.Future<String> r : results) {
        assertEquals("", r.get(), "seed=" + seed);
      }
    } finally {
      pool.shutdownNow();
    }
  }

  // The packed path checks key and value for NaN and infinities while it copies them, and the
  // factored layout checks key while it finds the key maxima (both skip checkCall's separate
  // scans); with either layout, a bad query, key or value must be rejected with checkCall's
  // message (query before key when both are bad, as checkCall), before any output is written.
  @Test
  void packedNodeTableRejectsNonFiniteInputsLikeCheckCall() {
    long seed = 0x9AC4EEL;
    Random random = new Random(seed);
    int n = 300;
    CsrGraph graph = graph(random, n);
    float[] q = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    float[] bad = {Float.NaN, Float.POSITIVE_INFINITY, Float.NEGATIVE_INFINITY};
    String[] names = {"query", "key", "value", "query and key"};
    for (String name : names) {
      float[] target = name.startsWith("query") ? q : name.equals("key") ? k : v;
      int[] places = {0, target.length / 2 + 3, target.length - 1};
      for (int b = 0; b < bad.length; b++) {
        int at = places[b];
        float saved = target[at];
        int keyAt = k.length - 1 - at % k.length; // the second bad term, query and key
        float savedKey = k[keyAt];
        target[at] = bad[b];
        if (name.equals("query and key")) {
          k[keyAt] = Float.NaN;
        }
        float[] out = new float[n * SHAPE.valueWidth()];
        String want = checkCallMessage(graph, q, k, v, out);
        for (int threads = 1; threads <= 3; threads++) {
          for (boolean factored : new boolean[] {true, false}) {
            CsrAttentionKernel kernel = packing(threads, true, factored);
            String where =
                name
                    + "["
                    + at
                    + "] = "
                    + bad[b]
                    + ", "
                    + threads
                    + (factored ? " threads, factored" : " threads, exact");
            assertRejectedBeforeOutput(kernel, graph, q, k, v, out, want, where);
          }
        }
        target[at] = saved;
        k[keyAt] = savedKey;
      }
    }
  }

  /** checkCall's message for a GAT call (8 heads of 8) with these inputs, which must be bad. */
  static String checkCallMessage(CsrGraph graph, float[] q, float[] k, float[] v, float[] out) {
    return assertThrows(
            IllegalArgumentException.class,
            () -> AttentionKernels.checkCall(graph, GAT, SHAPE, q, k, v, out, null))
        .getMessage();
  }

  /**
   * Asserts that the kernel rejects the GAT call (8 heads of 8) with checkCall's message {@code
   * want} and leaves {@code out}, which holds zeros, untouched: inputs are checked before any
   * output is written.
   */
  static void assertRejectedBeforeOutput(
      CsrAttentionKernel kernel,
      CsrGraph graph,
      float[] q,
      float[] k,
      float[] v,
      float[] out,
      String want,
      String where) {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> kernel.attend(graph, GAT, SHAPE, q, k, v, out, null),
            where);
    assertEquals(want, e.getMessage(), where);
    if (!Arrays.equals(new float[out.length], out)) {
      fail(where + ": output written before the error");
    }
  }

  @Test
  void spareTableIsReusedOnlyWhenLargeEnough() {
    PackedNodeTable tables = new PackedNodeTable();
    float[] first = tables.take(10);
    assertEquals(PackedNodeTable.length(10), first.length);
    assertTrue(
        first.length >= PackedNodeTable.EXACT_OFFSET + 10 * PackedNodeTable.EXACT_ROW,
        "exact layout");
    assertTrue(
        first.length
            >= PackedNodeTable.factoredValueRow(9) + AllHeadsMath.HEADS * AllHeadsMath.HEADS,
        "factored layout");
    tables.giveBack(first);
    assertSame(first, tables.take(7), "a spare large enough is reused");
    assertFalse(tables.take(7) == first, "a spare is handed to one call at a time");
    tables.giveBack(first);
    float[] larger = tables.take(11);
    assertEquals(PackedNodeTable.length(11), larger.length);
  }

  // A table the heap cannot hold is not an error: take() says so with null (and logs once), and
  // the kernel then reads the caller's arrays in place.
  @Test
  void tableTheHeapCannotHoldIsDeclined() {
    int n = PackedNodeTable.MAX_NODES;
    assumeTrue(
        PackedNodeTable.bytes(n) > Runtime.getRuntime().maxMemory(),
        "the test heap could hold " + PackedNodeTable.bytes(n) + " bytes");
    PackedNodeTable tables = new PackedNodeTable();
    assertEquals(null, tables.take(n));
    assertEquals(null, tables.take(n));
  }

  @Test
  void completePatternMatchesReference() {
    long seed = 0xA11E4EL;
    Random random = new Random(seed);
    // rows of 300 entries: two full blocks and a partial one; rows of 61: one block
    for (int n : new int[] {300, 61}) {
      CompletePattern pattern = CompletePattern.of(n);
      float[] q = uniform(random, n * SHAPE.keyWidth(), -3f, 3f);
      float[] k = uniform(random, n * SHAPE.keyWidth(), -3f, 3f);
      float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
      ReferenceAttention.Result want = ReferenceAttention.attend(pattern, GAT, SHAPE, q, k, v);
      RowMath vector = RowMaths.preferred();
      assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
      for (RowMath math : List.of(vector)) {
        Run got = run(pattern, math, 2, true, q, k, v);
        double error = ReferenceAttention.relativeError(want.out(), got.out());
        assertTrue(
            error < 1e-5,
            math.name() + ", n=" + n + ", seed=" + seed + ": relative error " + error);
      }
    }
  }

  // Float overflow of q + k: the kernel recomputes such scores in float64 and clamps them to the
  // float range (CsrRowPass contract), so outputs stay convex combinations and weights sum to 1.
  @Test
  void overflowingScoresStayFiniteAndMatchThePerHeadPath() {
    long seed = 0xA11E4FL;
    Random random = new Random(seed);
    int n = 200;
    CsrGraph graph = graph(random, n);
    float[] q = uniform(random, n * SHAPE.keyWidth(), -1f, 1f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -1f, 1f);
    for (int x = 0; x < q.length; x += 3) {
      q[x] = 3e38f;
      k[x] = 3e38f;
    }
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    Run vector = run(graph, RowMaths.preferred(), 2, true, q, k, v);
    Run oneThread = run(graph, RowMaths.preferred(), 1, true, q, k, v);
    Run perHead = run(graph, RowMaths.scalar(), 1, false, q, k, v);
    String where = "seed=" + seed;
    assertArrayEquals(oneThread.out(), vector.out(), where);
    assertArrayEquals(oneThread.weights(), vector.weights(), where);
    for (float o : vector.out()) {
      assertTrue(Float.isFinite(o) && Math.abs(o) <= 1f + 1e-6f, "out " + o + ", " + where);
    }
    for (int i = 0; i < n; i++) {
      for (int h = 0; h < SHAPE.heads(); h++) {
        double total = 0;
        for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
          total += vector.weights()[e * SHAPE.heads() + h];
        }
        if (graph.degree(i) > 0) {
          assertEquals(1.0, total, 1e-5, "row " + i + ", head " + h + ", " + where);
        }
      }
    }
    double apart = relativeError(perHead.out(), vector.out());
    assertTrue(apart < 1e-5, where + ": per-head and all-heads paths differ by " + apart);
  }

  // The vector all-heads methods against the scalar reference forms, bit for bit (AllHeadsMath
  // contract:
  // same IEEE operations in the same order), over block lengths that cross every edge case, with
  // fresh and carried-over running maxima (rescaling by exp(old - new) and by exp(-inf) = 0).
  @Test
  void vectorAllHeadsMethodsEqualTheScalarReferenceBitForBit() {
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    RowMath scalar = RowMaths.scalar();
    int h = AllHeadsMath.HEADS;
    for (int count : new int[] {1, 2, 7, 8, 9, 64, CsrPass.BLOCK}) {
      long seed = 0xB17B17L + count;
      Random random = new Random(seed);
      String where = "count " + count + ", seed=" + seed;
      float[] q = uniform(random, 3 + h, -6f, 6f);
      float[] keys = uniform(random, count * h, -6f, 6f);
      int nodes = 50;
      float[] value = uniform(random, nodes * h * h, -1f, 1f);
      int[] rowBase = new int[count];
      for (int t = 0; t < count; t++) {
        rowBase[t] = random.nextInt(nodes) * h * h;
      }
      float[] sv = new float[count * h];
      float[] ss = new float[count * h];
      assertTrue(vector.allHeads().additiveScores(q, 3, keys, 0, count, 0.2f, sv), where);
      assertTrue(scalar.allHeads().additiveScores(q, 3, keys, 0, count, 0.2f, ss), where);
      assertArrayEquals(ss, sv, "scores, " + where);
      float[] maxV = new float[h];
      float[] sumV = new float[h];
      float[] accV = new float[h * h];
      Arrays.fill(maxV, Float.NEGATIVE_INFINITY);
      if (count % 2 == 0) { // a previous block: some maxima above, some below this block's
        maxV = uniform(random, h, -6f, 6f);
        sumV = uniform(random, h, 1f, 5f);
        accV = uniform(random, h * h, -3f, 3f);
      }
      float[] maxS = maxV.clone();
      float[] sumS = sumV.clone();
      float[] accS = accV.clone();
      vector
          .allHeads()
          .softmaxAccumulate(sv, count, maxV, sumV, rowBase, value, accV, new float[h]);
      scalar
          .allHeads()
          .softmaxAccumulate(ss, count, maxS, sumS, rowBase, value, accS, new float[h]);
      assertArrayEquals(ss, sv, "weights, " + where);
      assertArrayEquals(maxS, maxV, "maxima, " + where);
      assertArrayEquals(sumS, sumV, "sums, " + where);
      assertArrayEquals(accS, accV, "accumulator, " + where);
      for (int x = 0; x < sv.length; x++) {
        assertTrue(sv[x] >= 0f && sv[x] <= 1f, "weight " + sv[x] + ", " + where);
      }
    }
    // packing and reading keys in place: the same copies and the same scores, bit for bit
    for (int nodes : new int[] {1, 2, 13}) {
      long seed = 0x9AC4EFL + nodes;
      Random random = new Random(seed);
      String where = nodes + " nodes, seed=" + seed;
      float[] key = uniform(random, nodes * h, -6f, 6f);
      float[] value = uniform(random, nodes * h * h, -1f, 1f);
      int offset = PackedNodeTable.EXACT_OFFSET;
      float[] tableV = uniform(random, offset + nodes * PackedNodeTable.EXACT_ROW + 5, -9f, 9f);
      float[] tableS = tableV.clone();
      assertTrue(vector.allHeads().pack(key, value, 0, nodes, tableV), where);
      assertTrue(scalar.allHeads().pack(key, value, 0, nodes, tableS), where);
      assertArrayEquals(tableS, tableV, "packed table, " + where);
      int count = 3 * nodes + 1;
      int[] rows = random.ints(count, 0, nodes).toArray();
      int[] rowBase = Arrays.stream(rows).map(PackedNodeTable::exactValueRow).toArray();
      float[] gathered = new float[count * h];
      for (int t = 0; t < count; t++) {
        System.arraycopy(key, rows[t] * h, gathered, t * h, h);
        assertArrayEquals(
            Arrays.copyOfRange(value, rows[t] * h * h, (rows[t] + 1) * h * h),
            Arrays.copyOfRange(tableV, rowBase[t], rowBase[t] + h * h),
            "value row in the table, " + where);
      }
      float[] q = uniform(random, h, -6f, 6f);
      float[] want = new float[count * h];
      scalar.allHeads().additiveScores(q, 0, gathered, 0, count, 0.2f, want);
      for (RowMath math : List.of(vector, scalar)) {
        float[] got = new float[count * h];
        assertTrue(math.allHeads().additiveScoresInTable(q, 0, tableV, rowBase, count, 0.2f, got));
        assertArrayEquals(want, got, "scores from the table, " + math.name() + ", " + where);
      }
      for (float bad : new float[] {Float.NaN, Float.POSITIVE_INFINITY, Float.NEGATIVE_INFINITY}) {
        for (float[] input : List.of(key, value)) {
          int at = random.nextInt(input.length);
          float saved = input[at];
          input[at] = bad;
          assertFalse(vector.allHeads().pack(key, value, 0, nodes, tableV), where);
          assertFalse(scalar.allHeads().pack(key, value, 0, nodes, tableS), where);
          input[at] = saved;
        }
      }
      // finite values whose sum overflows are not mistaken for infinities
      Arrays.fill(value, 3e38f);
      assertTrue(vector.allHeads().pack(key, value, 0, nodes, tableV), where);
      assertTrue(scalar.allHeads().pack(key, value, 0, nodes, tableS), where);
    }
    // an overflowing score is reported, not hidden
    float[] big = {3e38f, 3e38f, 0f, 0f, 0f, 0f, 0f, 0f};
    float[] s = new float[h];
    assertFalse(vector.allHeads().additiveScores(big, 0, big, 0, 1, 0.2f, s));
    assertFalse(scalar.allHeads().additiveScores(big, 0, big, 0, 1, 0.2f, s));
  }

  // The factored methods (FactoredMath contract): vector and scalar forms do the same IEEE
  // operations in
  // the same order, so tables, weights, sums, accumulators and outputs agree bit for bit; over
  // queries that put each head above and below zero (z = q + K), keys near q + k = 0 and keys far
  // below the maximum (factors that underflow to 0).
  @Test
  void factoredMethodsEqualTheScalarReferenceBitForBit() {
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    RowMath scalar = RowMaths.scalar();
    int h = AllHeadsMath.HEADS;
    int nodes = 40;
    for (int count : new int[] {1, 2, 7, 8, 9, 64, CsrPass.BLOCK}) {
      long seed = 0xFAC702L + count;
      Random random = new Random(seed);
      String where = "count " + count + ", seed=" + seed;
      float[] key = uniform(random, nodes * h, -6f, 6f);
      key[5] = -200f; // exp(k - K) below the exponential's range: exactly 0
      float[] value = uniform(random, nodes * h * h, -1f, 1f);
      float[] maxV = new float[h];
      Arrays.fill(maxV, Float.NEGATIVE_INFINITY);
      float[] maxS = maxV.clone();
      assertTrue(vector.factored().keyMaxima(key, 0, nodes, maxV), where);
      assertTrue(scalar.factored().keyMaxima(key, 0, nodes, maxS), where);
      assertArrayEquals(maxS, maxV, "key maxima, " + where);
      float[] tableV = uniform(random, PackedNodeTable.length(nodes) + 3, -9f, 9f);
      float[] tableS = tableV.clone();
      assertTrue(vector.factored().pack(key, value, 0, nodes, maxV, 0.2f, tableV), where);
      assertTrue(scalar.factored().pack(key, value, 0, nodes, maxS, 0.2f, tableS), where);
      assertArrayEquals(tableS, tableV, "factored table, " + where);
      int[] rowBase = new int[count];
      int[] rows = new int[count];
      for (int t = 0; t < count; t++) {
        rows[t] = random.nextInt(nodes);
        rowBase[t] = PackedNodeTable.factoredValueRow(rows[t]);
      }
      // heads 0-3 with q + K above zero, 4-7 below; head 2 exactly on q + k = 0 for one source
      float[] q = new float[3 + h];
      for (int x = 0; x < h; x++) {
        q[3 + x] = x < 4 ? random.nextFloat() * 8f - maxV[x] : -maxV[x] - 1f - random.nextFloat();
      }
      q[3 + 2] = -key[rows[0] * h + 2];
      float[] sV = new float[(count + 1) * h];
      float[] sS = new float[(count + 1) * h];
      float[] outV = new float[h * h + 4];
      float[] outS = new float[h * h + 4];
      boolean okV = vector.factored().row(q, 3, maxV, 0.2f, tableV, rowBase, count, sV, outV, 4);
      boolean okS = scalar.factored().row(q, 3, maxS, 0.2f, tableS, rowBase, count, sS, outS, 4);
      assertEquals(okS, okV, "accepted, " + where);
      assertTrue(okV, "weights of a few units must not underflow, " + where);
      assertArrayEquals(
          Arrays.copyOf(sS, count * h), Arrays.copyOf(sV, count * h), "weights, " + where);
      assertArrayEquals(outS, outV, "outputs, " + where);
      float[] sumV = uniform(random, h, 0.5f, 2f);
      float[] accV = uniform(random, h * h, -1f, 1f);
      float[] sumS = sumV.clone();
      float[] accS = accV.clone();
      vector.factored().block(q, 3, maxV, 0.2f, tableV, rowBase, count, sV, sumV, accV);
      scalar.factored().block(q, 3, maxS, 0.2f, tableS, rowBase, count, sS, sumS, accS);
      assertArrayEquals(sumS, sumV, "block sums, " + where);
      assertArrayEquals(accS, accV, "block accumulator, " + where);
      // against the definition in float64: weight exp(LeakyReLU(q + k) - LeakyReLU(q + K)). The
      // float differences k - K carry a rounding error of up to half an ulp of |k - K|, so the
      // tolerance grows with it (2^-23 per unit of distance, plus the exponential's few ulp)
      for (int t = 0; t < count; t++) {
        for (int x = 0; x < h; x++) {
          double z = (double) q[3 + x] + key[rows[t] * h + x];
          double bound = (double) q[3 + x] + maxV[x];
          double want = Math.exp(leaky(z) - leaky(bound));
          double distance = Math.abs((double) key[rows[t] * h + x] - maxV[x]);
          double tolerance = want * 0x1p-23 * (4 + distance);
          assertEquals(want, sV[t * h + x], tolerance, "weight " + t + "/" + x + ", " + where);
        }
      }
    }
    // a non-finite key term is reported by the maxima, a non-finite value by the copy
    float[] key = uniform(new Random(3), nodes * h, -1f, 1f);
    float[] value = uniform(new Random(4), nodes * h * h, -1f, 1f);
    float[] table = new float[PackedNodeTable.length(nodes)];
    for (RowMath math : List.of(vector, scalar)) {
      float[] max = new float[h];
      Arrays.fill(max, Float.NEGATIVE_INFINITY);
      key[17] = Float.NaN;
      assertFalse(math.factored().keyMaxima(key, 0, nodes, max), math.name());
      key[17] = 0.5f;
      Arrays.fill(max, Float.NEGATIVE_INFINITY);
      assertTrue(math.factored().keyMaxima(key, 0, nodes, max), math.name());
      value[99] = Float.NEGATIVE_INFINITY;
      assertFalse(math.factored().pack(key, value, 0, nodes, max, 0.2f, table), math.name());
      value[99] = 0.25f;
    }
  }

  private static double leaky(double z) {
    return z > 0 ? z : 0.2 * z;
  }

  // Factored weights are relative to a bound from the largest key term of the whole graph; a row
  // whose own scores lie far below it (here, every source's key terms 56 below one node's) would
  // underflow, so such rows are recomputed with the exact online softmax. Outputs match the float64
  // reference (Veličković et al. 2018, eqs. 1-4) and the exact path within 1e-5, with identical
  // bits for 1 and 3 threads. With queries near the float maximum, q + k rounds to the same float
  // (and double) for every source, so the exact path and the reference see equal scores, while the
  // factored weights still see exp(k) (softmax shift invariance): there the outputs need only be
  // finite convex combinations, the same for any thread count.
  @Test
  void factoredRowsFallBackToTheExactSoftmaxWhereTheirWeightsUnderflow() {
    long seed = 0xFAC703L;
    Random random = new Random(seed);
    int n = 500;
    CsrGraph graph = graph(random, n);
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    float[] q = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    for (int x = 0; x < SHAPE.keyWidth(); x++) {
      // node 7: 56 or more above the rest, so rows without it have factored weights of e^-48 or
      // less, sums under 2^-60; most rows do not contain it
      k[7 * SHAPE.keyWidth() + x] = 60f;
    }
    for (boolean overflow : new boolean[] {false, true}) {
      float[] kk = k.clone();
      float[] qq = q.clone();
      if (overflow) {
        for (int x = 0; x < qq.length; x += 5) {
          qq[x] = 3e38f;
        }
        kk[7 * SHAPE.keyWidth() + 1] = 3e38f;
      }
      String where = "overflow " + overflow + ", seed=" + seed;
      Run one = run(packing(1, true), graph, false, qq, kk, v);
      Run three = run(packing(3, true), graph, false, qq, kk, v);
      assertArrayEquals(one.out(), three.out(), where);
      for (float o : one.out()) {
        assertTrue(Float.isFinite(o) && Math.abs(o) <= 1f + 1e-6f, "out " + o + ", " + where);
      }
      if (!overflow) {
        Run exact = run(packing(1, false), graph, false, qq, kk, v);
        double apart = relativeError(exact.out(), one.out());
        assertTrue(apart < 1e-5, where + ": factored and exact outputs differ by " + apart);
        ReferenceAttention.Result want = ReferenceAttention.attend(graph, GAT, SHAPE, qq, kk, v);
        double error = ReferenceAttention.relativeError(want.out(), one.out());
        assertTrue(error < 1e-5, where + ": relative error " + error);
        Run weighed = run(packing(1, true), graph, true, qq, kk, v);
        assertArrayEquals(one.out(), weighed.out(), where + ": with and without weights");
        error = ReferenceAttention.relativeError(want.weights(), weighed.weights());
        assertTrue(error < 1e-5, where + ": weights relative error " + error);
      }
    }
  }

  // The one-block row method against the steps it replaces (AllHeadsMath contract: fresh maxima,
  // sums and accumulator, one block, then acc / sum), bit for bit, for both implementations; the
  // maxima and sums it is given hold junk first, which it must ignore.
  @Test
  void wholeRowMethodEqualsTheBlockStepsBitForBit() {
    int h = AllHeadsMath.HEADS;
    for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
      for (int count : new int[] {1, 2, 7, 8, 9, 64, CsrPass.BLOCK}) {
        long seed = 0xB10C4L + count;
        Random random = new Random(seed);
        String where = math.name() + ", count " + count + ", seed=" + seed;
        float[] scores = uniform(random, count * h, -8f, 8f);
        int nodes = 40;
        float[] value = uniform(random, nodes * h * h, -1f, 1f);
        int[] rowBase = new int[count];
        for (int t = 0; t < count; t++) {
          rowBase[t] = random.nextInt(nodes) * h * h;
        }
        float[] sStep = scores.clone();
        float[] maxStep = new float[h];
        Arrays.fill(maxStep, Float.NEGATIVE_INFINITY);
        float[] sumStep = new float[h];
        float[] accStep = new float[h * h];
        RowMaths.scalar()
            .allHeads()
            .softmaxAccumulate(
                sStep, count, maxStep, sumStep, rowBase, value, accStep, new float[h]);
        float[] outStep = new float[3 + h * h];
        for (int x = 0; x < h * h; x++) {
          outStep[3 + x] = accStep[x] / sumStep[x / h];
        }
        float[] sRow = scores.clone();
        float[] maxRow = uniform(random, h, -9f, 9f);
        float[] sumRow = uniform(random, h, -9f, 9f);
        float[] outRow = new float[3 + h * h];
        math.allHeads().softmaxRow(sRow, count, maxRow, sumRow, rowBase, value, outRow, 3);
        assertArrayEquals(outStep, outRow, "outputs, " + where);
        assertArrayEquals(sStep, sRow, "weights, " + where);
        assertArrayEquals(maxStep, maxRow, "maxima, " + where);
        assertArrayEquals(sumStep, sumRow, "sums, " + where);
      }
    }
  }

  // A row of one entry skips its score: for any finite score the whole-row method's maximum is the
  // score, its weight exp(0) = 1 and each output fma(1, v, +0) / 1, so the shortcut must give the
  // same bits, including +0 for a -0 value, subnormals and the largest floats.
  @Test
  void singleEntryRowEqualsTheWholeRowMethodBitForBit() {
    int h = AllHeadsMath.HEADS;
    float[] special = {
      0f, -0f, Float.MIN_VALUE, -Float.MIN_VALUE, 1e-40f, -1e-40f, Float.MAX_VALUE, -Float.MAX_VALUE
    };
    for (RowMath math : List.of(RowMaths.preferred(), RowMaths.scalar())) {
      for (int trial = 0; trial < 50; trial++) {
        long seed = 0x51E6L + trial;
        Random random = new Random(seed);
        String where = math.name() + ", seed=" + seed;
        float[] scores = uniform(random, h, -8f, 8f);
        if (trial % 2 == 1) {
          for (int x = 0; x < h; x++) {
            scores[x] = special[random.nextInt(special.length)];
          }
        }
        float[] value = uniform(random, 3 * h * h, -1f, 1f);
        for (int x = 0; x < value.length; x += 1 + random.nextInt(4)) {
          value[x] = special[random.nextInt(special.length)];
        }
        int base = random.nextInt(3) * h * h;
        float[] want = new float[5 + h * h];
        math.allHeads()
            .softmaxRow(
                scores.clone(), 1, new float[h], new float[h], new int[] {base}, value, want, 5);
        float[] got = new float[5 + h * h];
        math.allHeads().singleEntryRow(value, base, got, 5);
        assertArrayEquals(want, got, where);
      }
    }
  }

  // The kernel takes that shortcut with and without weights (a lone entry's weight is exp(0) / 1 =
  // 1 exactly): outputs must not depend on whether weights are written, without the node table or
  // with either of its layouts, and those rows' weights are 1.
  @Test
  void oneEntryRowsGiveTheSameBitsWithAndWithoutWeights() {
    Random random = new Random(0x1E27L);
    int n = 300;
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * 12];
    int e = 0;
    for (int i = 0; i < n; i++) {
      int degree = i % 3 == 0 ? random.nextInt(12) : 1;
      int[] row = random.ints(0, n).distinct().limit(degree).sorted().toArray();
      System.arraycopy(row, 0, columns, e, row.length);
      e += row.length;
      offsets[i + 1] = e;
    }
    CsrGraph graph = CsrGraph.of(offsets, Arrays.copyOf(columns, e));
    float[] q = uniform(random, n * SHAPE.keyWidth(), -2f, 2f);
    float[] k = uniform(random, n * SHAPE.keyWidth(), -2f, 2f);
    float[] v = uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    v[7] = -0f;
    for (int threads = 1; threads <= 2; threads++) {
      for (int layout = 0; layout < 3; layout++) {
        String where =
            threads + " thread(s), " + List.of("unpacked", "exact", "factored").get(layout);
        CsrAttentionKernel kernel = packing(threads, layout > 0, layout == 2);
        Run with = run(kernel, graph, true, q, k, v);
        Run without = run(kernel, graph, false, q, k, v);
        assertArrayEquals(with.out(), without.out(), where);
        for (int i = 0; i < n; i++) {
          if (graph.rowEnd(i) - graph.rowStart(i) == 1) {
            int o = i * SHAPE.valueWidth();
            assertArrayEquals(
                Arrays.copyOfRange(with.out(), o, o + SHAPE.valueWidth()),
                Arrays.copyOfRange(without.out(), o, o + SHAPE.valueWidth()),
                where + ", one-entry row " + i);
          }
        }
        for (int i = 0; i < n; i++) {
          if (graph.rowEnd(i) - graph.rowStart(i) == 1) {
            for (int x = 0; x < SHAPE.heads(); x++) {
              assertEquals(1f, with.weights()[graph.rowStart(i) * SHAPE.heads() + x], where);
            }
          }
        }
      }
    }
  }

  static double relativeError(float[] reference, float[] actual) {
    double[] r = new double[reference.length];
    for (int x = 0; x < r.length; x++) {
      r[x] = reference[x];
    }
    return ReferenceAttention.relativeError(r, actual);
  }

  static float[] uniform(Random random, int length, float lo, float hi) {
    float[] a = new float[length];
    for (int x = 0; x < length; x++) {
      a[x] = lo + (hi - lo) * random.nextFloat();
    }
    return a;
  }
}
