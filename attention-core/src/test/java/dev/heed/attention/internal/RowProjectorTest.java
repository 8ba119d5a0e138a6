package dev.heed.attention.internal;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Arrays;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Both forms of the small projections equal a float64 matrix product (common practice: a float32
 * dot product of length d is accurate to about √d·1e-7 relative), over sizes that exercise every
 * blocking case (row counts around the four-row block, column counts around one and two 8-lane
 * vectors), and give each row the same bits however the rows are blocked.
 */
class RowProjectorTest {

  private static final int[] ROWS = {0, 1, 3, 4, 5, 8, 11};
  private static final int[] INS = {1, 7, 64};
  private static final int[] OUTS = {1, 5, 8, 13, 16, 24, 64, 71};

  @Test
  void bothFormsMatchFloat64AndDoNotDependOnBlocking() {
    long seed = 20261204;
    Random random = new Random(seed);
    for (RowProjector projector : new RowProjector[] {RowProjectors.plain(), vectorOrPlain()}) {
      for (int n : ROWS) {
        for (int in : INS) {
          for (int out : OUTS) {
            float[] x = gaussian(random, n * in);
            float[] w = gaussian(random, in * out);
            float[] y0 = gaussian(random, n * out);
            float[] y = y0.clone();
            float[] xBefore = x.clone();
            float[] wBefore = w.clone();
            projector.multiplyAdd(x, n, in, w, out, y);
            String where =
                projector.getClass().getSimpleName()
                    + " "
                    + n
                    + "x"
                    + in
                    + "x"
                    + out
                    + " (seed "
                    + seed
                    + ")";
            assertArrayEquals(xBefore, x, "x modified, " + where);
            assertArrayEquals(wBefore, w, "w modified, " + where);
            for (int i = 0; i < n; i++) {
              double worst = 0;
              double scale = 0;
              for (int o = 0; o < out; o++) {
                double sum = y0[i * out + o];
                double abs = Math.abs(sum);
                for (int k = 0; k < in; k++) {
                  double p = (double) x[i * in + k] * w[k * out + o];
                  sum += p;
                  abs += Math.abs(p);
                }
                worst = Math.max(worst, Math.abs(sum - y[i * out + o]));
                scale = Math.max(scale, abs);
              }
              // error relative to the sum of magnitudes: cancellation cannot inflate it
              assertTrue(worst <= 1e-6 * scale, where + " row " + i + ": " + worst / scale);
              // the same row projected alone gives the same bits
              float[] alone = Arrays.copyOfRange(y0, i * out, (i + 1) * out);
              projector.multiplyAdd(
                  Arrays.copyOfRange(x, i * in, (i + 1) * in), 1, in, w, out, alone);
              assertArrayEquals(
                  alone, Arrays.copyOfRange(y, i * out, (i + 1) * out), where + " row " + i);
            }
          }
        }
      }
    }
  }

  @Test
  void vectorFormRunsWhereTheBuildExpectsIt() {
    // The build passes --add-modules jdk.incubator.vector and this property to the test JVM.
    if (Boolean.getBoolean("heed.test.expectVector")) {
      String chosen = RowProjectors.preferred().getClass().getName();
      assertTrue(chosen.endsWith("VectorRowProjector"), chosen);
    }
  }

  private static RowProjector vectorOrPlain() {
    return RowProjectors.preferred();
  }

  private static float[] gaussian(Random random, int length) {
    float[] values = new float[length];
    for (int i = 0; i < length; i++) {
      values[i] = (float) random.nextGaussian();
    }
    return values;
  }
}
