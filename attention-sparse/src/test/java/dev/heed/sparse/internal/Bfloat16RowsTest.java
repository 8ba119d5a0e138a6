package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.NodeRowPrecision;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * bfloat16 value rows in the factored node table ({@link NodeRowPrecision#BFLOAT16}): the rounding
 * is to nearest even and clamps to finite values; the vector methods equal the scalar reference bit
 * for bit; a kernel call stays within the documented bound of the float64 reference (Veličković et
 * al. 2018, eqs. 1-4, with each value rounded to 8 significand bits: {@code |Δout| ≤ 2^-8 · Σ α_j
 * |v_j|}), gives the float32 path's weights bit for bit, and the same bits for 1 to 3 threads and
 * with or without weights.
 */
class Bfloat16RowsTest {

  private static final HeadShape SHAPE = new HeadShape(8, 1, 8);
  private static final ScoreFunction GAT = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);

  /** Rounding to nearest (ties to even) against a float64 search of the two bfloat16 neighbours. */
  @Test
  void roundsToNearestEvenAndClampsToFinite() {
    long seed = 0xBF16L;
    Random random = new Random(seed);
    for (int trial = 0; trial < 200_000; trial++) {
      float x = Float.intBitsToFloat(random.nextInt());
      if (!Float.isFinite(x)) {
        continue;
      }
      int bits = Float.floatToRawIntBits(x);
      // the bfloat16 values on either side of x: its top 16 bits, and one step further from zero
      float down = Float.intBitsToFloat(bits & 0xFFFF0000);
      float up = Float.intBitsToFloat((bits & 0xFFFF0000) + 0x10000);
      double dDown = Math.abs((double) x - down);
      double dUp = Math.abs((double) x - up);
      float want;
      if (!Float.isFinite(up)) {
        want = down; // clamped: the largest finite bfloat16
      } else if (dDown != dUp) {
        want = dDown < dUp ? down : up;
      } else {
        want = ((bits >>> 16) & 1) == 0 ? down : up;
      }
      float got = Bfloat16.low(Bfloat16.round(x));
      assertEquals(
          Float.floatToRawIntBits(want), Float.floatToRawIntBits(got), "x=" + x + ", seed=" + seed);
      // the unit roundoff 2^-8 relative to |x| (bfloat16 has float32's range, so no underflow
      // beyond float32's own subnormals, which round the same way)
      if (Math.abs(x) >= Float.MIN_NORMAL && Math.abs(x) <= Bfloat16.LARGEST_ROUNDED_FINITE) {
        assertTrue(Math.abs((double) got - x) <= 0x1p-8 * Math.abs(x), "bound, x=" + x);
      }
    }
    assertEquals(0x7F7F, Bfloat16.round(Float.MAX_VALUE), "clamped to the largest finite");
    assertEquals(0xFF7F, Bfloat16.round(-Float.MAX_VALUE), "clamped, negative");
    assertEquals(0x8000, Bfloat16.round(-0f));
    assertEquals(1f, Bfloat16.low(Bfloat16.pair(1f, -2f)));
    assertEquals(-2f, Bfloat16.high(Bfloat16.pair(1f, -2f)));
    int word = Bfloat16.pair(-Float.MAX_VALUE, Float.MAX_VALUE);
    assertFalse(Float.isNaN(Float.intBitsToFloat(word)), "a table word is never a NaN pattern");
  }

  @Test
  void vectorMethodsEqualTheScalarReferenceBitForBit() {
    RowMath vector = RowMaths.preferred();
    assumeTrue(vector.servesAllHeads(), vector.name() + " has no 8-float vectors");
    RowMath scalar = RowMaths.scalar();
    int h = AllHeadsMath.HEADS;
    int nodes = 40;
    for (int count : new int[] {1, 2, 7, 8, 9, 64, CsrPass.BLOCK}) {
      long seed = 0xB16B0L + count;
      Random random = new Random(seed);
      String where = "count " + count + ", seed=" + seed;
      float[] key = CsrAllHeadsPathTest.uniform(random, nodes * h, -6f, 6f);
      float[] value = CsrAllHeadsPathTest.uniform(random, nodes * h * h, -3f, 3f);
      value[7] = Float.MAX_VALUE; // clamped, not infinite
      value[40] = -Float.MAX_VALUE;
      value[8] = Bfloat16.LARGEST_ROUNDED_FINITE;
      // values j and j + 32 share word j: 41 and 42 sit in the high halves of words 9 and 10
      value[41] = 1f + 0x1p-8f; // a tie: rounds to even (1)
      value[42] = 1f + 0x3p-8f; // a tie: rounds to even (1 + 2^-6)
      float[] max = new float[h];
      Arrays.fill(max, Float.NEGATIVE_INFINITY);
      assertTrue(scalar.factored().keyMaxima(key, 0, nodes, max), where);
      float[] tableV =
          CsrAllHeadsPathTest.uniform(random, PackedNodeTable.bfloat16Length(nodes) + 3, -9f, 9f);
      float[] tableS = tableV.clone();
      assertTrue(vector.factored().packBfloat16(key, value, 0, nodes, max, 0.2f, tableV), where);
      assertTrue(scalar.factored().packBfloat16(key, value, 0, nodes, max, 0.2f, tableS), where);
      assertArrayEquals(bits(tableS), bits(tableV), "bfloat16 table, " + where);
      int row0 = PackedNodeTable.bfloat16ValueRow(0);
      assertEquals(0x7F7F, Float.floatToRawIntBits(tableV[row0 + 7]) & 0xFFFF, "clamped, " + where);
      assertEquals(0x7F7F, Float.floatToRawIntBits(tableV[row0 + 8]) & 0xFFFF, "clamped, " + where);
      assertEquals(1f, Bfloat16.high(Float.floatToRawIntBits(tableV[row0 + 9])), "tie, " + where);
      assertEquals(
          1f + 0x1p-6f, Bfloat16.high(Float.floatToRawIntBits(tableV[row0 + 10])), "tie, " + where);
      int[] rowBase = new int[count];
      for (int t = 0; t < count; t++) {
        rowBase[t] = PackedNodeTable.bfloat16ValueRow(random.nextInt(nodes));
      }
      float[] q = new float[3 + h];
      for (int x = 0; x < h; x++) {
        q[3 + x] = x < 4 ? random.nextFloat() * 8f - max[x] : -max[x] - 1f - random.nextFloat();
      }
      float[] sV = new float[(count + 1) * h];
      float[] sS = new float[(count + 1) * h];
      float[] outV = new float[h * h + 4];
      float[] outS = new float[h * h + 4];
      boolean okV =
          vector.factored().rowBfloat16(q, 3, max, 0.2f, tableV, rowBase, count, sV, outV, 4);
      boolean okS =
          scalar.factored().rowBfloat16(q, 3, max, 0.2f, tableS, rowBase, count, sS, outS, 4);
      assertEquals(okS, okV, "accepted, " + where);
      assertArrayEquals(sS, sV, "weights and sums, " + where);
      assertArrayEquals(outS, outV, "outputs, " + where);
      float[] sumV = CsrAllHeadsPathTest.uniform(random, h, 0.5f, 2f);
      float[] accV = CsrAllHeadsPathTest.uniform(random, h * h, -1f, 1f);
      float[] sumS = sumV.clone();
      float[] accS = accV.clone();
      vector.factored().blockBfloat16(q, 3, max, 0.2f, tableV, rowBase, count, sV, sumV, accV);
      scalar.factored().blockBfloat16(q, 3, max, 0.2f, tableS, rowBase, count, sS, sumS, accS);
      assertArrayEquals(sumS, sumV, "block sums, " + where);
      assertArrayEquals(accS, accV, "block accumulator, " + where);
    }
    // a non-finite value is reported by the copy
    float[] key = CsrAllHeadsPathTest.uniform(new Random(3), nodes * h, -1f, 1f);
    float[] value = CsrAllHeadsPathTest.uniform(new Random(4), nodes * h * h, -1f, 1f);
    float[] table = new float[PackedNodeTable.bfloat16Length(nodes)];
    float[] max = new float[h];
    Arrays.fill(max, Float.NEGATIVE_INFINITY);
    assertTrue(scalar.factored().keyMaxima(key, 0, nodes, max));
    for (RowMath math : List.of(vector, scalar)) {
      value[99] = Float.NaN;
      assertFalse(math.factored().packBfloat16(key, value, 0, nodes, max, 0.2f, table));
      value[99] = Float.POSITIVE_INFINITY;
      assertFalse(math.factored().packBfloat16(key, value, 0, nodes, max, 0.2f, table));
      value[99] = 0.5f;
      assertTrue(math.factored().packBfloat16(key, value, 0, nodes, max, 0.2f, table));
    }
  }

  /**
   * Through the kernel: each output float within {@code (2^-8 + 2^-16) · Σ α_j |v_j|} of the
   * float64 reference (2^-8 from rounding the values, the rest the float32 path's own rounding,
   * which {@link CsrAllHeadsPathTest} bounds by 1e-6 relative to the exact path).
   */
  @Test
  void kernelStaysWithinTheBoundOfTheFloat64Reference() {
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    long seed = 0xB0D5L;
    Random random = new Random(seed);
    int n = 900;
    CsrGraph graph = CsrAllHeadsPathTest.graph(random, n);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -4f, 4f);
    // values over several binades, both signs, so relative rounding is exercised at every scale
    float[] v = new float[n * SHAPE.valueWidth()];
    for (int x = 0; x < v.length; x++) {
      v[x] = (float) ((random.nextBoolean() ? 1 : -1) * Math.exp(6 * random.nextDouble() - 3));
    }
    float[] v0 = v.clone();
    ReferenceAttention.Result reference = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, v);
    float[] absV = new float[v.length];
    for (int x = 0; x < v.length; x++) {
      absV[x] = Math.abs(v[x]);
    }
    double[] weightedAbs = ReferenceAttention.attend(graph, GAT, SHAPE, q, k, absV).out();
    float[] float32Weights = null;
    float[] first = null;
    float[] firstWeights = null;
    for (int threads = 1; threads <= 3; threads++) {
      String where = threads + " threads, seed=" + seed;
      CsrAttentionKernel rounded = kernel(threads, NodeRowPrecision.BFLOAT16);
      float[] out = new float[n * SHAPE.valueWidth()];
      float[] weights = new float[Math.toIntExact(graph.entryCount() * SHAPE.heads())];
      rounded.attend(graph, GAT, SHAPE, q, k, v, out, weights);
      if (first == null) {
        first = out;
        firstWeights = weights;
        double worst = 0;
        boolean anyRounded = false;
        for (int x = 0; x < out.length; x++) {
          double error = Math.abs(out[x] - reference.out()[x]);
          double bound = (0x1p-8 + 0x1p-16) * weightedAbs[x];
          assertTrue(
              error <= bound, where + ": output " + x + " off by " + error + ", bound " + bound);
          if (weightedAbs[x] > 0) {
            worst = Math.max(worst, error / weightedAbs[x]);
          }
          anyRounded |= error > 0x1p-14 * weightedAbs[x];
        }
        assertTrue(anyRounded, where + ": no output shows the rounding; was the option taken?");
        assertTrue(worst > 0, where);
        float[] float32Out = new float[out.length];
        float32Weights = new float[weights.length];
        // the float32 factored path (a table at any size): the same factors, so the same weights
        new CsrAttentionKernel(
                threads,
                RowMaths.preferred(),
                CsrKernelVariant.DEFAULT.withMinCostPerThread(1).withMinPackedTableBytes(0))
            .attend(graph, GAT, SHAPE, q, k, v, float32Out, float32Weights);
        assertArrayEquals(float32Weights, weights, where + ": weights are float32's, bit for bit");
      } else {
        assertArrayEquals(first, out, where);
        assertArrayEquals(firstWeights, weights, where);
      }
      float[] noWeights = new float[out.length];
      rounded.attend(graph, GAT, SHAPE, q, k, v, noWeights, null);
      assertArrayEquals(first, noWeights, where + ", no weights");
    }
    assertArrayEquals(v0, v, "the kernel must not modify value");
  }

  /** The option reaches the kernel through {@link KernelOptions}, and bad values still fail. */
  @Test
  void kernelOptionsSelectTheRowsAndBadValuesAreRejected() {
    assumeTrue(RowMaths.preferred().servesAllHeads(), "no 8-float vectors here");
    Random random = new Random(0xC0FFEL);
    int n = 300;
    CsrGraph graph = CsrAllHeadsPathTest.graph(random, n);
    float[] q = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -2f, 2f);
    float[] k = CsrAllHeadsPathTest.uniform(random, n * SHAPE.keyWidth(), -2f, 2f);
    float[] v = CsrAllHeadsPathTest.uniform(random, n * SHAPE.valueWidth(), -1f, 1f);
    KernelOptions options = new KernelOptions(2, KernelOptions.DEFAULT_DENSE_MEMORY_BUDGET_BYTES);
    AttentionKernel plain = AttentionKernels.forPath(ComputePath.SPARSE, options);
    AttentionKernel rounded =
        AttentionKernels.forPath(
            ComputePath.SPARSE, options.withNodeRowPrecision(NodeRowPrecision.BFLOAT16));
    float[] a = new float[n * SHAPE.valueWidth()];
    float[] b = new float[n * SHAPE.valueWidth()];
    plain.attend(graph, GAT, SHAPE, q, k, v, a, null);
    rounded.attend(graph, GAT, SHAPE, q, k, v, b, null);
    assertFalse(Arrays.equals(a, b), "bfloat16 rows must change some output bits");
    double apart = CsrAllHeadsPathTest.relativeError(a, b);
    assertTrue(apart > 0 && apart < 0x1p-8, "float32 and bfloat16 outputs differ by " + apart);
    v[1234] = Float.NaN;
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> rounded.attend(graph, GAT, SHAPE, q, k, v, b, null));
    assertTrue(e.getMessage().contains("value"), e.getMessage());
  }

  private static CsrAttentionKernel kernel(int threads, NodeRowPrecision rows) {
    return new CsrAttentionKernel(
        threads,
        RowMaths.preferred(),
        CsrKernelVariant.DEFAULT.withMinCostPerThread(1).withNodeRows(rows));
  }

  private static int[] bits(float[] a) {
    int[] b = new int[a.length];
    for (int x = 0; x < a.length; x++) {
      b[x] = Float.floatToRawIntBits(a[x]);
    }
    return b;
  }
}
