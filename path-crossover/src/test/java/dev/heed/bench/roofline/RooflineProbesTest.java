package dev.heed.bench.roofline;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The roofline probes compute what they claim (the gather loops against a plain float64 sum) and
 * return sane numbers. Speeds are never asserted.
 */
class RooflineProbesTest {

  @Test
  void theVectorLoopIsTheOneThatRunsInThisBuild() {
    // the test JVM gets --add-modules jdk.incubator.vector (pom), so the fast loop must be active
    assertTrue(GatherProbe.vectorApiAvailable(), "jdk.incubator.vector not readable in tests");
    assertTrue(GatherProbe.bestLoop().describe().startsWith("Vector API"));
  }

  @Test
  void gatherLoopsSumTheIndexedRows() {
    long seed = 42;
    SplittableRandom r = new SplittableRandom(seed);
    for (int width : new int[] {1, 7, 16, 64, 67}) {
      int rows = 50;
      int k = GatherProbe.ROWS_PER_TARGET;
      float[] table = new float[rows * width];
      for (int i = 0; i < table.length; i++) {
        table[i] = (float) (r.nextDouble() * 2 - 1);
      }
      int[] idx = new int[rows * k];
      for (int i = 0; i < idx.length; i++) {
        idx[i] = r.nextInt(rows);
      }
      float[] expected = new float[rows * width];
      for (int o = 0; o < rows; o++) {
        for (int j = 0; j < width; j++) {
          double s = 0;
          for (int q = 0; q < k; q++) {
            s += table[idx[o * k + q] * width + j];
          }
          expected[o * width + j] = (float) s;
        }
      }
      for (GatherLoop loop : new GatherLoop[] {GatherProbe.bestLoop(), new ScalarGatherLoop()}) {
        float[] out = new float[rows * width];
        loop.gather(table, width, idx, k, out, 0, rows);
        // 16 float32 additions of values below 1: absolute error well under 1e-5
        assertArrayEquals(
            expected, out, 1e-5f, loop.describe() + ", width " + width + ", seed " + seed);
      }
    }
  }

  @Test
  void gatherProbeReturnsPositiveRates() {
    GatherProbe.Measurement m = GatherProbe.measure(256, 64, 2, 20_000, 2, 1);
    assertTrue(m.rowsPerSecond() > 0 && Double.isFinite(m.rowsPerSecond()), m.toString());
    assertTrue(m.minRowsPerSecond() <= m.rowsPerSecond());
    assertTrue(m.rowsPerSecond() <= m.maxRowsPerSecond());
    assertEquals(m.rowsPerSecond() * 64 * 4, m.bytesPerSecond(), 1e-6 * m.bytesPerSecond());
  }

  @Test
  void gemmProbeReturnsAPositiveRate() {
    GemmProbe.Measurement m = GemmProbe.measure(64, 2, 3);
    assertTrue(m.gflops() > 0 && Double.isFinite(m.gflops()), m.toString());
    assertTrue(m.blasThreads() >= 1, m.toString());
  }

  @Test
  void assumedLimitsAnswerForAnyTableSize() {
    MachineLimits limits = MachineLimits.assumed(100, 5e7);
    assertEquals(1e11, limits.gemmFlopsPerSecond(), 1);
    assertEquals(5e7, limits.gatherRowsPerSecond(16384), 1e-6);
  }
}
