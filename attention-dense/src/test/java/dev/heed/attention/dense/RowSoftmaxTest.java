package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;
import static org.junit.jupiter.api.Assumptions.assumeTrue;

import dev.heed.attention.internal.RowSoftmax;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The dense kernel's Java row softmax against a float64 evaluation with {@link Math#exp}, over
 * lengths that cross every vector width and tail (1 to 4097), scores spread over a wide range, and
 * masked ({@code -Infinity}) entries.
 */
class RowSoftmaxTest {

  private static final int[] LENGTHS = {1, 2, 3, 7, 8, 9, 15, 16, 17, 31, 33, 100, 1000, 4097};

  private static RowSoftmax vector() {
    RowSoftmax softmax = RowSoftmaxes.preferred();
    assumeTrue(softmax != null, "the Vector API is not readable in this JVM");
    return softmax;
  }

  @Test
  void weightsAndSumMatchFloat64() {
    RowSoftmax softmax = vector();
    Random random = new Random(0x50F7L);
    for (int length : LENGTHS) {
      for (double spread : new double[] {1, 30, 200}) {
        float[] row = new float[length];
        for (int x = 0; x < length; x++) {
          row[x] = (float) ((2 * random.nextDouble() - 1) * spread);
          if (length > 1 && random.nextInt(5) == 0) {
            row[x] = Float.NEGATIVE_INFINITY; // a masked pair
          }
        }
        row[random.nextInt(length)] = (float) (spread * random.nextDouble()); // one finite score
        float[] input = row.clone();
        float sum = softmax.exponentiateShifted(row, length);
        double[] scores = new double[length];
        double max = Double.NEGATIVE_INFINITY;
        for (int x = 0; x < length; x++) {
          scores[x] = input[x];
          max = Math.max(max, scores[x]);
        }
        String where = softmax.describe() + ", length " + length + ", spread " + spread;
        assertReference(where, scores, max, row, sum);
        assertTrue(sum >= 1f, where + ": the row maximum contributes exactly 1");
      }
    }
  }

  @Test
  void nonFiniteScoresGiveASumTheKernelRecomputes() {
    // The kernel recomputes a row in float64 when its sum is not a positive finite number.
    RowSoftmax softmax = vector();
    for (float bad : new float[] {Float.NaN, Float.POSITIVE_INFINITY}) {
      for (int length : new int[] {1, 5, 16, 37}) {
        float[] row = new float[length];
        for (int x = 0; x < length; x++) {
          row[x] = x * 0.25f;
        }
        row[length / 2] = bad;
        float sum = softmax.exponentiateShifted(row, length);
        assertTrue(
            !(sum > 0f && sum < Float.POSITIVE_INFINITY),
            "length " + length + " with " + bad + " gave " + sum);
      }
    }
  }

  @Test
  void maskedRowsMatchFloat64WithTheMaskAdded() {
    RowSoftmax softmax = vector();
    Random random = new Random(0x3A5CL);
    for (int length : LENGTHS) {
      int offset = random.nextInt(5);
      float[] row = new float[length];
      float[] mask = randomMask(random, length);
      for (int x = 0; x < length; x++) {
        row[x] = (float) ((2 * random.nextDouble() - 1) * 40);
      }
      int kept = random.nextInt(length);
      mask[kept] = 0f;
      row[kept] = -60f; // the largest score may be masked: the maximum is over allowed pairs
      byte[] allowed = allowedBits(mask, offset, random);
      float[] input = row.clone();
      byte[] allowedCopy = allowed.clone();
      float sum = softmax.exponentiateShifted(row, allowed, offset, length);
      double[] expected = new double[length];
      double max = Double.NEGATIVE_INFINITY;
      for (int x = 0; x < length; x++) {
        expected[x] = (double) input[x] + mask[x];
        max = Math.max(max, expected[x]);
      }
      assertReference(softmax.describe() + " masked, length " + length, expected, max, row, sum);
      assertTrue(java.util.Arrays.equals(allowedCopy, allowed), "the mask must not be modified");
    }
  }

  @Test
  void additiveRowsMatchFloat64LeakyReluScores() {
    RowSoftmax softmax = vector();
    Random random = new Random(0xADD1L);
    for (int length : LENGTHS) {
      for (boolean masked : new boolean[] {false, true}) {
        float query = (float) random.nextGaussian() * 3;
        float slope = 0.2f; // the GAT paper's LeakyReLU slope (Veličković et al. 2018)
        float[] keys = new float[length];
        float[] mask = masked ? randomMask(random, length) : null;
        for (int x = 0; x < length; x++) {
          keys[x] = (float) random.nextGaussian() * 3;
        }
        if (masked) {
          mask[random.nextInt(length)] = 0f;
        }
        int offset = random.nextInt(3);
        byte[] allowed = masked ? allowedBits(mask, offset, random) : null;
        float[] keysCopy = keys.clone();
        float[] row = new float[length];
        float sum = softmax.exponentiateAdditive(query, keys, slope, allowed, offset, row, length);
        // Float64 reference: e = LeakyReLU(q + k) (GAT, Veličković et al. 2018, eq. 1), the sum
        // rounded to float32 once as the kernel's inputs are, then the mask.
        double[] expected = new double[length];
        double max = Double.NEGATIVE_INFINITY;
        for (int x = 0; x < length; x++) {
          double z = query + keys[x]; // a float32 sum, widened
          z = z < 0 ? z * slope : z;
          expected[x] = z + (masked ? mask[x] : 0);
          max = Math.max(max, expected[x]);
        }
        assertReference(
            softmax.describe() + " additive, masked " + masked + ", length " + length,
            expected,
            max,
            row,
            sum);
        assertTrue(java.util.Arrays.equals(keysCopy, keys), "the keys must not be modified");
      }
    }
  }

  /**
   * Checks weights and sum against a float64 evaluation with {@link Math#exp} (common practice for
   * softmax: {@code exp(x - max)}).
   */
  private static void assertReference(
      String where, double[] scores, double max, float[] row, float sum) {
    double expectedSum = 0;
    for (int x = 0; x < scores.length; x++) {
      double expected = Math.exp(scores[x] - max);
      expectedSum += expected;
      if (scores[x] == Double.NEGATIVE_INFINITY) {
        assertEquals(0f, row[x], where + ": a masked pair must get exactly 0");
      } else {
        // FastExp is accurate to a few ulp, and x - max is rounded to float32 first, which
        // moves the result by up to |x - max|·2^-24 relative; terms under e^-87 are flushed to
        // 0 (absolute 2e-38)
        double shift = Math.abs(scores[x] - max);
        assertEquals(expected, row[x], (4e-7 + shift * 6e-8) * expected + 2e-38, where + " @" + x);
      }
    }
    assertTrue(
        Math.abs(sum - expectedSum) <= 1e-6 * expectedSum,
        where + ": sum " + sum + " against " + expectedSum);
  }

  /** A float mask, 0 (allowed) or -Infinity, with about a third of the pairs masked. */
  private static float[] randomMask(Random random, int length) {
    float[] mask = new float[length];
    for (int x = 0; x < length; x++) {
      mask[x] = random.nextInt(3) == 0 ? Float.NEGATIVE_INFINITY : 0f;
    }
    return mask;
  }

  /**
   * The same mask as allowed bits (RowSoftmax.isAllowed's layout) from byte {@code offset}, with
   * random bytes before it and random bits past the row's end, which the softmax must not read.
   */
  private static byte[] allowedBits(float[] mask, int offset, Random random) {
    byte[] bits = new byte[offset + (mask.length + 7) / 8];
    random.nextBytes(bits);
    for (int x = 0; x < mask.length; x++) {
      int at = offset + x / 8;
      int bit = 1 << (x % 8);
      bits[at] = (byte) (mask[x] == 0f ? bits[at] | bit : bits[at] & ~bit);
    }
    for (int x = 0; x < mask.length; x++) {
      assertEquals(mask[x] == 0f, RowSoftmax.isAllowed(bits, offset, x), "bit " + x);
    }
    return bits;
  }
}
