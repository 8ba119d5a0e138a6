package dev.heed.attention.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.List;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * The input check's scans: the chosen one (the Vector API form where the build reads the module)
 * and the plain loop find the same first NaN or infinity (IEEE 754: NaN and ±infinity are the
 * non-finite floats, {@link Float#isFinite}), at every position that matters to a chunked scan.
 */
class FiniteScanTest {

  private static final float[] BAD = {Float.NaN, Float.POSITIVE_INFINITY, Float.NEGATIVE_INFINITY};

  @Test
  void findsTheFirstNonFiniteValueWhereverItIs() {
    int chunk = 1 << 14;
    int[] lengths = {0, 1, 7, 8, 33, 4095, 4096, 4097, chunk - 1, chunk, chunk + 1, 3 * chunk + 77};
    for (FiniteScan scan : List.of(FiniteScans.preferred(), FiniteScans.plain())) {
      for (int length : lengths) {
        long seed = 0xF1417EL + length;
        Random random = new Random(seed);
        float[] values = new float[length];
        for (int i = 0; i < length; i++) {
          // the float range's ends are finite and must pass
          values[i] =
              switch (random.nextInt(4)) {
                case 0 -> Float.MAX_VALUE * (random.nextBoolean() ? 1 : -1);
                case 1 -> Float.MIN_VALUE;
                default -> (float) random.nextGaussian();
              };
        }
        String where = scan + ", length " + length + ", seed=" + seed;
        assertEquals(-1, scan.firstNonFinite(values), where);
        int[] positions = {0, 1, length / 2, length - 8, length - 1, chunk - 1, chunk, 2 * chunk};
        for (int at : positions) {
          if (at < 0 || at >= length) {
            continue;
          }
          for (float bad : BAD) {
            float[] withBad = values.clone();
            withBad[at] = bad;
            if (at + 3 < length) {
              withBad[at + 3] = Float.NaN; // a later one must not be reported instead
            }
            assertEquals(at, scan.firstNonFinite(withBad), bad + " at " + at + ", " + where);
          }
        }
      }
    }
  }

  @Test
  void rangeScanSeesOnlyItsRange() {
    int chunk = 1 << 14;
    int length = 3 * chunk + 77;
    Random random = new Random(0xF1417FL);
    float[] values = new float[length];
    for (int i = 0; i < length; i++) {
      values[i] = (float) random.nextGaussian();
    }
    int[][] ranges = {{0, 0}, {0, 1}, {5, 12}, {chunk - 3, chunk + 9}, {7, length}, {0, length}};
    for (FiniteScan scan : List.of(FiniteScans.preferred(), FiniteScans.plain())) {
      for (int[] r : ranges) {
        String where = scan + ", range " + r[0] + ".." + r[1];
        assertTrue(scan.isFinite(values, r[0], r[1]), where);
        for (int at : new int[] {r[0] - 1, r[0], r[1] - 1, r[1]}) {
          if (at < 0 || at >= length) {
            continue;
          }
          for (float bad : BAD) {
            float saved = values[at];
            values[at] = bad;
            boolean inside = at >= r[0] && at < r[1];
            assertEquals(
                !inside, scan.isFinite(values, r[0], r[1]), where + ", " + bad + " at " + at);
            values[at] = saved;
          }
        }
      }
    }
  }

  @Test
  void vectorScanRunsWhereTheBuildExpectsIt() {
    // The build passes --add-modules jdk.incubator.vector and this property to the test JVM (as
    // for the dense softmax); the check must then take the vector form.
    if (Boolean.getBoolean("heed.test.expectVector")) {
      String chosen = FiniteScans.preferred().getClass().getName();
      assertTrue(chosen.endsWith("VectorFiniteScan"), chosen);
    }
  }
}
