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
        double max = Double.NEGATIVE_INFINITY;
        for (float v : input) {
          max = Math.max(max, v);
        }
        // Float64 reference: exp(x - max) with java.lang.Math (common practice for softmax).
        double expectedSum = 0;
        String where = softmax.describe() + ", length " + length + ", spread " + spread;
        for (int x = 0; x < length; x++) {
          double expected = Math.exp(input[x] - max);
          expectedSum += expected;
          if (input[x] == Float.NEGATIVE_INFINITY) {
            assertEquals(0f, row[x], where + ": a masked pair must get exactly 0");
          } else {
            // FastExp is accurate to a few ulp, and x - max is rounded to float32 first, which
            // moves the result by up to |x - max|·2^-24 relative; terms under e^-87 are flushed to
            // 0 (absolute 2e-38)
            double shift = Math.abs(input[x] - max);
            assertEquals(
                expected, row[x], (4e-7 + shift * 6e-8) * expected + 2e-38, where + " at " + x);
          }
        }
        assertTrue(
            Math.abs(sum - expectedSum) <= 1e-6 * expectedSum,
            where + ": sum " + sum + " against " + expectedSum);
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
}
