package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.CsvSource;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.api.ops.impl.transforms.custom.DotProductAttention;
import org.nd4j.linalg.api.ops.impl.transforms.custom.MultiHeadDotProductAttention;
import org.nd4j.linalg.factory.Nd4j;
import org.nd4j.linalg.indexing.NDArrayIndex;

/**
 * The dense path against ND4J's own attention operations, a general-purpose outside reference (a
 * general-purpose reference library; its layouts were checked by experiment).
 *
 * <p>Layout mapping. Heed arrays are node-major and head-contiguous: element (node i, head h, k) at
 * {@code (i·H + h)·d + k}. ND4J's dot-product attention takes q {@code [B, d, Nq]}, k {@code [B, d,
 * Nk]}, v {@code [B, dv, Nk]} and returns {@code [B, dv, Nq]}; we make each head one batch item, so
 * ND4J's {@code q[h][k][i]} is Heed's {@code query[(i·H + h)·d + k]}, and the same for key, value
 * and output. ND4J's multi-head op takes inputs {@code [B, nIn, T]} and projections {@code Wq, Wk:
 * [H, pk, nIn]}, {@code Wv: [H, pv, nIn]}, {@code Wo: [H·pv, nOut]}, heads concatenated head-major
 * ({@code Wo} row {@code h·pv + p}), which is exactly Heed's head-contiguous output row, so {@code
 * final_i = out_i · Wo}.
 */
class DenseAgainstNd4jAttentionTest {

  /** ND4J's op agrees with a float64 loop to about 4e-7, measured; both are float32. */
  static final double TOLERANCE = 1e-5;

  static final AttentionKernel DENSE =
      new DenseAttentionKernelProvider().create(new KernelOptions(1, 64L << 20));

  /** Heed {@code [n, H, d]} (node-major, head-contiguous) to ND4J {@code [H, d, n]}. */
  static INDArray toNd4j(float[] heed, int n, int heads, int d) {
    return Nd4j.create(heed, new long[] {n, heads, d}, 'c').permute(1, 2, 0).dup('c');
  }

  static float[] random(Random random, int length) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = 2 * random.nextFloat() - 1;
    }
    return a;
  }

  static double relativeError(INDArray expected, float[] actual) {
    float[] e = expected.dup('c').data().asFloat();
    assertEquals(e.length, actual.length);
    double maxDiff = 0;
    double maxRef = 0;
    for (int i = 0; i < e.length; i++) {
      maxDiff = Math.max(maxDiff, Math.abs(e[i] - actual[i]));
      maxRef = Math.max(maxRef, Math.abs(e[i]));
    }
    return maxDiff / maxRef;
  }

  @ParameterizedTest(name = "n={0} heads={1} d={2}")
  @CsvSource({"1, 1, 1", "7, 3, 5", "61, 8, 64", "300, 2, 16"})
  void fullSelfAttentionMatchesNd4jDotProductAttention(int n, int heads, int d) {
    long seed = 7919L * n + heads;
    Random random = new Random(seed);
    HeadShape shape = new HeadShape(heads, d, d);
    float[] q = random(random, n * heads * d);
    float[] k = random(random, n * heads * d);
    float[] v = random(random, n * heads * d);
    float[] out = new float[n * heads * d];
    DENSE.attend(
        CompletePattern.of(n), ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);

    // ND4J dot-product attention, scaled = true divides by √d (Vaswani et al. 2017, eq. 1).
    INDArray expected =
        Nd4j.exec(
            new DotProductAttention(
                toNd4j(q, n, heads, d),
                toNd4j(k, n, heads, d),
                toNd4j(v, n, heads, d),
                null,
                true,
                false))[0];
    assertEquals(
        List.of((long) heads, (long) d, (long) n),
        List.of(expected.size(0), expected.size(1), expected.size(2)));
    // Heed's out [n, H, d] mapped the same way as the inputs.
    INDArray ours = toNd4j(out, n, heads, d);
    double error = relativeError(expected, ours.data().asFloat());
    assertTrue(error < TOLERANCE, "relative error " + error + ", seed " + seed);
  }

  @Test
  void maskedRowsMatchNd4jWithOneQueryPerBatchItem() {
    // ND4J's mask is one value per key, so a graph mask is expressed by making each (query, head)
    // its own batch item whose key mask is that query's CSR row (measured: the op applies the mask
    // per batch item).
    int n = 24;
    int heads = 2;
    int d = 6;
    long seed = 2024;
    Random random = new Random(seed);
    int[] offsets = new int[n + 1];
    List<Integer> cols = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < n; j++) {
        if (random.nextDouble() < 0.35 || i == j) {
          cols.add(j);
        }
      }
      offsets[i + 1] = cols.size();
    }
    CsrGraph mask = CsrGraph.of(offsets, cols.stream().mapToInt(Integer::intValue).toArray());
    HeadShape shape = new HeadShape(heads, d, d);
    float[] q = random(random, n * heads * d);
    float[] k = random(random, n * heads * d);
    float[] v = random(random, n * heads * d);
    float[] out = new float[n * heads * d];
    DENSE.attend(mask, ScoreFunction.scaledDotProduct(), shape, q, k, v, out, null);

    int batch = n * heads;
    INDArray bq = Nd4j.create(DataType.FLOAT, batch, d, 1);
    INDArray bk = Nd4j.create(DataType.FLOAT, batch, d, n);
    INDArray bv = Nd4j.create(DataType.FLOAT, batch, d, n);
    INDArray bm = Nd4j.zeros(DataType.FLOAT, batch, n);
    for (int i = 0; i < n; i++) {
      for (int h = 0; h < heads; h++) {
        int b = i * heads + h;
        for (int c = 0; c < d; c++) {
          bq.putScalar(new long[] {b, c, 0}, q[(i * heads + h) * d + c]);
          for (int j = 0; j < n; j++) {
            bk.putScalar(new long[] {b, c, j}, k[(j * heads + h) * d + c]);
            bv.putScalar(new long[] {b, c, j}, v[(j * heads + h) * d + c]);
          }
        }
        for (int e = mask.rowStart(i); e < mask.rowEnd(i); e++) {
          bm.putScalar(new long[] {b, mask.column(e)}, 1f);
        }
      }
    }
    INDArray expected = Nd4j.exec(new DotProductAttention(bq, bk, bv, bm, true, false))[0];
    // expected [n·H, d, 1]: batch item i·H + h, channel c is Heed's out[(i·H + h)·d + c].
    double error = relativeError(expected.reshape(batch * d), out);
    assertTrue(error < TOLERANCE, "relative error " + error + ", seed " + seed);
  }

  @Test
  void multiHeadLayerMatchesNd4jMultiHeadDotProductAttention() {
    // Multi-head attention (Vaswani et al. 2017, §3.2.2): project, attend per head, concatenate,
    // project with Wo. Heed does the attention; the test does the projections in float32.
    int n = 50;
    int nIn = 12;
    int heads = 4;
    int p = 8;
    int nOut = 10;
    long seed = 31337;
    Random random = new Random(seed);
    float[] x = random(random, n * nIn);
    INDArray wq = Nd4j.create(random(random, heads * p * nIn), new long[] {heads, p, nIn}, 'c');
    INDArray wk = Nd4j.create(random(random, heads * p * nIn), new long[] {heads, p, nIn}, 'c');
    INDArray wv = Nd4j.create(random(random, heads * p * nIn), new long[] {heads, p, nIn}, 'c');
    INDArray wo = Nd4j.create(random(random, heads * p * nOut), new long[] {heads * p, nOut}, 'c');
    INDArray input = Nd4j.create(x, new long[] {n, nIn}, 'c');

    float[] q = project(input, wq, n, heads, p);
    float[] k = project(input, wk, n, heads, p);
    float[] v = project(input, wv, n, heads, p);
    float[] out = new float[n * heads * p];
    DENSE.attend(
        CompletePattern.of(n),
        ScoreFunction.scaledDotProduct(),
        new HeadShape(heads, p, p),
        q,
        k,
        v,
        out,
        null);
    // out row i is [head 0 | head 1 | ...], matching Wo rows h·pv + p.
    INDArray ours = Nd4j.create(out, new long[] {n, heads * p}, 'c').mmul(wo); // [n, nOut]

    INDArray batched = input.transpose().reshape(1, nIn, n).dup('c'); // [B=1, nIn, T=n]
    INDArray expected =
        Nd4j.exec(
            new MultiHeadDotProductAttention(
                batched, batched, batched, wq, wk, wv, wo, null, true, false))[0];
    // expected [1, nOut, n] → [n, nOut]
    INDArray expectedRows = expected.reshape(nOut, n).transpose().dup('c');
    double error = relativeError(expectedRows, ours.dup('c').data().asFloat());
    assertTrue(error < TOLERANCE, "relative error " + error + ", seed " + seed);
  }

  /** q[i, h, :] = W[h] · x_i, written node-major and head-contiguous. */
  static float[] project(INDArray input, INDArray w, int n, int heads, int p) {
    float[] result = new float[n * heads * p];
    for (int h = 0; h < heads; h++) {
      INDArray wh = w.get(NDArrayIndex.point(h)).dup('c'); // [p, nIn]
      float[] proj = input.mmul(wh.transpose()).dup('c').data().asFloat(); // [n, p]
      for (int i = 0; i < n; i++) {
        System.arraycopy(proj, i * p, result, (i * heads + h) * p, p);
      }
    }
    return result;
  }
}
