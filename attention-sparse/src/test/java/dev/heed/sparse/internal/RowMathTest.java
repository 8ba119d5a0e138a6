package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.internal.FastExp;
import java.util.Arrays;
import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The inner-loop primitives of both implementations against float64 sums over awkward lengths
 * (Lucene practice: 1, 3, 4, 5, 7, 8, 13, 16, 17, ...; lengths cross every vector width and tail),
 * and the polynomial exponential against {@link Math#exp}.
 */
class RowMathTest {

  private static final int[] LENGTHS = {1, 2, 3, 4, 5, 7, 8, 9, 12, 13, 16, 17, 31, 32, 33, 64, 67};

  private static List<RowMath> implementations() {
    return List.of(RowMaths.preferred(), RowMaths.scalar());
  }

  // IEEE 754 float32 unit roundoff 2^-24; a length-d float32 sum is accurate to about d·u
  // relative to the sum of magnitudes (common practice).
  private static double sumTolerance(int length, double magnitude) {
    return 4 * length * 6e-8 * magnitude + 1e-30;
  }

  @Test
  void dotAndGatv2MatchFloat64() {
    Random random = new Random(0x0A11L);
    for (RowMath math : implementations()) {
      for (int length : LENGTHS) {
        int ao = random.nextInt(5);
        int bo = random.nextInt(5);
        float[] a = uniform(random, length + ao, -1f, 1f);
        float[] b = uniform(random, length + bo, -1f, 1f);
        float[] c = uniform(random, length + 3, -1f, 1f);
        double dot = 0;
        double magnitude = 0;
        double gat = 0;
        double gatMagnitude = 0;
        for (int k = 0; k < length; k++) {
          dot += (double) a[ao + k] * b[bo + k];
          magnitude += Math.abs((double) a[ao + k] * b[bo + k]);
          double z = (double) a[ao + k] + b[bo + k];
          double term = c[3 + k] * (z > 0 ? z : 0.2 * z); // Brody et al. 2022, GATv2 score
          gat += term;
          gatMagnitude += Math.abs(term);
        }
        String where = math.name() + ", length " + length;
        assertEquals(
            dot, math.perHead().dot(a, ao, b, bo, length), sumTolerance(length, magnitude), where);
        assertEquals(
            gat,
            math.perHead().gatv2(c, 3, a, ao, b, bo, length, 0.2f),
            sumTolerance(length, gatMagnitude),
            where);
      }
    }
  }

  @Test
  void blockDotScoresMatchFloat64ForEveryHeadAndEntry() {
    Random random = new Random(0x0A14L);
    int stride = CsrPass.BLOCK;
    for (RowMath math : implementations()) {
      // key widths per head crossing the vector width; block sizes crossing the 8-entry groups
      for (int keyDim : new int[] {1, 3, 8, 16, 17, 24, 64}) {
        for (int count : new int[] {1, 5, 7, 8, 9, 15, 16, 23, 128}) {
          int heads = 1 + random.nextInt(4);
          int width = heads * keyDim;
          int tableRows = 41;
          float[] keys = uniform(random, tableRows * width, -1f, 1f);
          float[] before = keys.clone();
          int qo = random.nextInt(3);
          float[] q = uniform(random, qo + width, -1f, 1f);
          int[] rowBase = new int[CsrPass.BLOCK];
          Arrays.fill(rowBase, -1_000_000); // entries past count must not be read
          for (int t = 0; t < count; t++) {
            rowBase[t] = random.nextInt(tableRows) * width;
          }
          rowBase[count - 1] = (tableRows - 1) * width; // the table's last row
          float scale = 0.25f;
          float[] s = new float[(CsrPass.BLOCK + 1) * heads];
          String where = math.name() + ", keyDim " + keyDim + ", count " + count;
          assertTrue(
              math.perHead()
                  .dotScores(q, qo, keys, rowBase, count, heads, keyDim, scale, s, stride),
              where + ": finite scores reported as not finite");
          for (int h = 0; h < heads; h++) {
            for (int t = 0; t < count; t++) {
              int o = h * keyDim;
              assertScaledDot(
                  q,
                  qo + o,
                  keys,
                  rowBase[t] + o,
                  keyDim,
                  scale,
                  s[h * stride + t],
                  where + ", head " + h + ", entry " + t);
            }
          }
          assertTrue(Arrays.equals(before, keys), where + ": modified the keys");
        }
      }
    }
  }

  @Test
  void blockDotScoresReportAnOverflow() {
    for (RowMath math : implementations()) {
      for (int count : new int[] {1, 8, 13}) {
        int keyDim = 16;
        float[] keys = new float[count * keyDim];
        float[] q = new float[keyDim];
        Arrays.fill(keys, 1e20f);
        Arrays.fill(q, 1e20f); // each product 1e40: past Float.MAX_VALUE
        int[] rowBase = new int[count];
        for (int t = 0; t < count; t++) {
          rowBase[t] = t * keyDim;
        }
        float[] s = new float[CsrPass.BLOCK];
        assertTrue(
            !math.perHead().dotScores(q, 0, keys, rowBase, count, 1, keyDim, 1f, s, CsrPass.BLOCK),
            math.name() + ", count " + count + ": an infinite score reported as finite");
      }
    }
  }

  @Test
  void runDotScoresMatchFloat64AndDoNotDependOnWhereTheRunStartsOrTheOtherRow() {
    Random random = new Random(0x0A16L);
    int stride = CsrPass.BLOCK;
    for (RowMath math : implementations()) {
      // key widths per head crossing the vector width; runs crossing the 8- and 64-entry groups
      for (int keyDim : new int[] {1, 3, 8, 16, 17, 24, 64}) {
        for (int count : new int[] {1, 5, 7, 8, 9, 15, 16, 23, 63, 64, 65, 71, 127, 128}) {
          int heads = 1 + random.nextInt(4);
          int width = heads * keyDim;
          int n = count + 3 + random.nextInt(20);
          float[] key = uniform(random, n * width, -1f, 1f);
          float[] columns = KeyColumns.of(key, n, width);
          float[] before = columns.clone();
          int qo = random.nextInt(3);
          int qo2 = qo + width; // the second query row
          float[] q = uniform(random, qo + 2 * width, -1f, 1f);
          int first = random.nextInt(n - count + 1);
          float scale = 0.25f;
          float[] s = new float[(CsrPass.BLOCK + 1) * heads];
          float[] s2 = new float[s.length];
          String where =
              math.name() + ", keyDim " + keyDim + ", count " + count + ", first " + first;
          assertTrue(
              math.perHead()
                  .dotScoresOfRuns(
                      q, qo, qo2, columns, n, first, count, heads, keyDim, scale, s, s2, stride),
              where + ": finite scores reported as not finite");
          for (int h = 0; h < heads; h++) {
            for (int t = 0; t < count; t++) {
              int o = h * keyDim;
              int ko = (first + t) * width + o;
              String entry = where + ", head " + h + ", entry " + t;
              assertScaledDot(q, qo + o, key, ko, keyDim, scale, s[h * stride + t], entry);
              assertScaledDot(q, qo2 + o, key, ko, keyDim, scale, s2[h * stride + t], entry);
            }
          }
          // the same entries in a run that starts later, with the rows swapped, and the second row
          // alone: the same bits
          int skip = Math.min(count - 1, 1 + random.nextInt(9));
          float[] later = new float[s.length];
          float[] later2 = new float[s.length];
          math.perHead()
              .dotScoresOfRuns(
                  q,
                  qo2,
                  qo,
                  columns,
                  n,
                  first + skip,
                  count - skip,
                  heads,
                  keyDim,
                  scale,
                  later2,
                  later,
                  stride);
          float[] alone = new float[s.length];
          math.perHead()
              .dotScoresOfRuns(
                  q, qo2, qo2, columns, n, first, count, heads, keyDim, scale, alone, alone,
                  stride);
          for (int h = 0; h < heads; h++) {
            for (int t = 0; t < count; t++) {
              int x = h * stride + t;
              String entry = where + ", head " + h + ", entry " + t;
              assertEquals(
                  Float.floatToRawIntBits(s2[x]),
                  Float.floatToRawIntBits(alone[x]),
                  entry + ": bits changed with the other row");
              if (t >= skip) {
                assertEquals(
                    Float.floatToRawIntBits(s[x]),
                    Float.floatToRawIntBits(later[x - skip]),
                    entry + ": bits moved with the run's start");
                assertEquals(
                    Float.floatToRawIntBits(s2[x]),
                    Float.floatToRawIntBits(later2[x - skip]),
                    entry + ": bits moved with the run's start");
              }
            }
          }
          assertTrue(Arrays.equals(before, columns), where + ": modified the key columns");
        }
      }
    }
  }

  @Test
  void keyColumnsTransposeTheKeyTable() {
    Random random = new Random(0x0A17L);
    for (int n : new int[] {1, 2, 9, 33}) {
      for (int width : new int[] {1, 5, 64}) {
        float[] key = uniform(random, n * width, -1f, 1f);
        float[] columns = KeyColumns.of(key, n, width);
        assertEquals(n * width, columns.length);
        for (int j = 0; j < n; j++) {
          for (int c = 0; c < width; c++) {
            assertEquals(key[j * width + c], columns[c * n + j], "node " + j + ", float " + c);
          }
        }
      }
    }
  }

  @Test
  void runDotScoresReportAnOverflow() {
    for (RowMath math : implementations()) {
      for (int count : new int[] {1, 8, 13, 64, 70}) {
        int keyDim = 16;
        float[] key = new float[count * keyDim];
        float[] q = new float[2 * keyDim];
        Arrays.fill(key, 0.5f);
        Arrays.fill(key, (count - 1) * keyDim, count * keyDim, 1e20f); // only the last entry
        Arrays.fill(q, 0, keyDim, 0.5f); // the first row's scores stay finite
        Arrays.fill(q, keyDim, 2 * keyDim, 1e20f); // products 1e40: past Float.MAX_VALUE
        float[] columns = KeyColumns.of(key, count, keyDim);
        float[] s = new float[CsrPass.BLOCK];
        float[] s2 = new float[CsrPass.BLOCK];
        for (int[] rows : new int[][] {{0, keyDim}, {keyDim, 0}, {keyDim, keyDim}}) {
          assertTrue(
              !math.perHead()
                  .dotScoresOfRuns(
                      q,
                      rows[0],
                      rows[1],
                      columns,
                      count,
                      0,
                      count,
                      1,
                      keyDim,
                      1f,
                      s,
                      s2,
                      CsrPass.BLOCK),
              math.name()
                  + ", count "
                  + count
                  + ", rows "
                  + Arrays.toString(rows)
                  + ": an infinite score reported as finite");
        }
      }
    }
  }

  @Test
  void weightedRowSumsMatchOneHeadAtATimeBitForBit() {
    Random random = new Random(0x0A15L);
    int stride = CsrPass.BLOCK;
    for (RowMath math : implementations()) {
      for (int valueDim : new int[] {1, 3, 8, 16, 24, 32, 64}) {
        for (int heads : new int[] {1, 2, 3, 4, 8}) {
          int width = heads * valueDim;
          int count = 1 + random.nextInt(40);
          int tableRows = 23;
          float[] value = uniform(random, tableRows * width, -1f, 1f);
          int[] rowBase = new int[count];
          for (int t = 0; t < count; t++) {
            rowBase[t] = random.nextInt(tableRows) * width;
          }
          float[] w = uniform(random, heads * stride, 0f, 1f);
          float[] acc = uniform(random, width, -1f, 1f);
          float[] expected = acc.clone();
          for (int h = 0; h < heads; h++) {
            math.perHead()
                .weightedRowSum(
                    w,
                    h * stride,
                    rowBase,
                    count,
                    h * valueDim,
                    value,
                    expected,
                    h * valueDim,
                    valueDim);
          }
          math.perHead().weightedRowSums(w, stride, rowBase, count, heads, valueDim, value, acc);
          assertTrue(
              Arrays.equals(expected, acc),
              math.name() + ", " + heads + " heads of " + valueDim + ": not the per-head sums");
        }
      }
    }
  }

  @Test
  void gatherRowsCopiesEachRequestedRowAndNothingElse() {
    Random random = new Random(0x0A13L);
    for (RowMath math : implementations()) {
      for (int width : LENGTHS) {
        int tableRows = 37;
        float[] table = uniform(random, tableRows * width, -1f, 1f);
        float[] before = table.clone();
        int count = 1 + random.nextInt(20);
        int[] rows = new int[count + 2];
        for (int t = 0; t < rows.length; t++) {
          rows[t] = random.nextInt(tableRows);
        }
        rows[0] = tableRows - 1; // the last row: a vector load must not read past the table
        float[] out = new float[(count + 1) * width];
        Arrays.fill(out, 7f);
        math.perHead().gatherRows(table, width, rows, count, out);
        String where = math.name() + ", width " + width;
        for (int t = 0; t < count; t++) {
          for (int x = 0; x < width; x++) {
            assertEquals(table[rows[t] * width + x], out[t * width + x], where);
          }
        }
        for (int k = count * width; k < out.length; k++) {
          assertEquals(7f, out[k], where + ": wrote past the block");
        }
        assertTrue(Arrays.equals(before, table), where + ": modified the table");
      }
    }
  }

  @Test
  void maxFindsTheLargestWhereverItLies() {
    // the vector form keeps four chains of maxima and a tail: the largest value in every position
    Random random = new Random(0x0A1BL);
    for (RowMath math : implementations()) {
      for (int length : LENGTHS) {
        for (int at = 0; at < length; at++) {
          int off = random.nextInt(4);
          float[] s = uniform(random, length + off, -30f, 5f);
          s[off + at] = 6f + random.nextFloat();
          String where = math.name() + ", length " + length + ", largest at " + at;
          assertEquals(s[off + at], math.perHead().max(s, off, length), where);
        }
      }
    }
  }

  @Test
  void maxExpWeightedSumAndScaleMatchFloat64() {
    Random random = new Random(0x0A12L);
    for (RowMath math : implementations()) {
      for (int length : LENGTHS) {
        String where = math.name() + ", length " + length;
        int off = random.nextInt(4);
        float[] s = uniform(random, length + off, -30f, 5f);
        float max = Float.NEGATIVE_INFINITY;
        for (int k = 0; k < length; k++) {
          max = Math.max(max, s[off + k]);
        }
        assertEquals(max, math.perHead().max(s, off, length), where);
        float[] before = s.clone();
        double sum = 0;
        float got = math.perHead().expShiftSum(s, off, length, max);
        for (int k = 0; k < length; k++) {
          double e = Math.exp(before[off + k] - max); // the argument rounded to float, as used
          sum += e;
          assertEquals(e, s[off + k], 4e-7 * e, where + ", element " + k);
        }
        assertEquals(sum, got, sumTolerance(length, sum), where);
        // three value rows of width length + 3, this head's span at offset 2 of each row
        int count = 3;
        int width = length + 3;
        float[] value = uniform(random, count * width, -1f, 1f);
        int[] rowBase = {2 * width, 0, width};
        float[] w = uniform(random, count + 1, 0f, 1f);
        float[] y = uniform(random, length + 1, -1f, 1f);
        float[] y0 = y.clone();
        math.perHead().weightedRowSum(w, 1, rowBase, count, 2, value, y, 1, length);
        assertEquals(y0[0], y[0], where + ": weightedRowSum wrote outside its span");
        double[] expected = new double[length];
        for (int k = 0; k < length; k++) {
          expected[k] = y0[1 + k];
          for (int t = 0; t < count; t++) {
            expected[k] += (double) w[1 + t] * value[rowBase[t] + 2 + k];
          }
          assertEquals(expected[k], y[1 + k], 1e-6, where);
        }
        math.perHead().scale(y, 1, length, -2.5f);
        for (int k = 0; k < length; k++) {
          assertEquals(expected[k] * -2.5, y[1 + k], 3e-6, where);
        }
      }
    }
  }

  // The vector exponential is the scalar polynomial done lane by lane: same bits (RowMath's
  // determinism requirement), so results cannot depend on where a span's tail falls.
  @Test
  void vectorAndScalarExponentialsAgreeBitForBit() {
    Random random = new Random(0x0A13L);
    RowMath vector = RowMaths.preferred();
    for (int length : LENGTHS) {
      float[] s = uniform(random, length, -100f, 0f);
      float[] t = s.clone();
      vector.perHead().expShiftSum(s, 0, length, 0f);
      for (int k = 0; k < length; k++) {
        t[k] = FastExp.expNonPositive(t[k]);
      }
      for (int k = 0; k < length; k++) {
        assertEquals(
            Float.floatToRawIntBits(t[k]),
            Float.floatToRawIntBits(s[k]),
            "length " + length + ", element " + k);
      }
    }
  }

  // The edges of the vector exponential's domain, where it relies on its final blend instead of
  // clamping its argument: every lane must still equal FastExp bit for bit (0 below the lowest
  // argument and for -Infinity, the polynomial from the lowest argument up), wherever the lane sits
  // in a vector or in the scalar tail.
  @Test
  void vectorExponentialMatchesScalarAtTheEdgesOfItsDomain() {
    float lowest = FastExp.LOWEST_ARGUMENT;
    float[] edges = {
      Float.NEGATIVE_INFINITY,
      -Float.MAX_VALUE,
      -1e30f,
      -1000f,
      -128f,
      -100f,
      Math.nextDown(lowest),
      lowest,
      Math.nextUp(lowest),
      -86.99f,
      -1e-30f,
      -Float.MIN_VALUE,
      -0f,
      0f
    };
    RowMath vector = RowMaths.preferred();
    for (int rotation = 0; rotation < edges.length; rotation++) {
      float[] s = new float[edges.length];
      for (int k = 0; k < edges.length; k++) {
        s[k] = edges[(k + rotation) % edges.length];
      }
      float[] t = s.clone();
      vector.perHead().expShiftSum(s, 0, s.length, 0f);
      for (int k = 0; k < s.length; k++) {
        assertEquals(
            Float.floatToRawIntBits(FastExp.expNonPositive(t[k])),
            Float.floatToRawIntBits(s[k]),
            "exp(" + t[k] + ") at position " + k);
      }
    }
  }

  @Test
  void polynomialExponentialMatchesMathExp() {
    assertEquals(1f, FastExp.expNonPositive(0f));
    assertEquals(1f, FastExp.expNonPositive(-0f));
    assertEquals(0f, FastExp.expNonPositive(Float.NEGATIVE_INFINITY));
    assertEquals(0f, FastExp.expNonPositive(-87.5f));
    assertEquals(0f, FastExp.expNonPositive(-Float.MAX_VALUE));
    double worst = 0;
    for (float x = -87f; x <= 0f; x += 0.000731f) {
      double want = Math.exp(x);
      double got = FastExp.expNonPositive(x);
      if (want > 1e-37) { // away from float subnormals
        worst = Math.max(worst, Math.abs(got - want) / want);
      }
    }
    assertTrue(worst < 3e-7, "worst relative error " + worst + " (about 2 ulp expected)");
  }

  /** Vaswani et al. 2017, eq. 1: the scaled dot product of two spans, in float64. */
  private static void assertScaledDot(
      float[] q, int qo, float[] key, int ko, int length, float scale, float got, String where) {
    double dot = 0;
    double magnitude = 0;
    for (int k = 0; k < length; k++) {
      double p = (double) q[qo + k] * key[ko + k];
      dot += p;
      magnitude += Math.abs(p);
    }
    assertEquals(scale * dot, got, scale * sumTolerance(length, magnitude), where);
  }

  private static float[] uniform(Random random, int length, float lo, float hi) {
    float[] a = new float[length];
    for (int i = 0; i < length; i++) {
      a[i] = lo + (hi - lo) * random.nextFloat();
    }
    return a;
  }
}
