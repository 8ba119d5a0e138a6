package dev.heed.attention.simd;

import dev.heed.attention.internal.RowProjector;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link RowProjector} on the Vector API, in {@link VectorExp#SPECIES}. Rows go in blocks of four
 * and columns in pairs of vectors: eight sums stay in registers over the whole {@code k} loop (the
 * register blocking of Goto and van de Geijn, "Anatomy of high-performance matrix multiplication",
 * ACM TOMS 2008), and each weight vector loaded feeds four fused multiply-adds. Columns past the
 * last whole vector use {@link Math#fma}, so every output is rounded the same way: a fused
 * multiply-add per k, in increasing k. Internal, not API.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorRowProjector implements RowProjector {

  private static final VectorSpecies<Float> SPECIES = VectorExp.SPECIES;
  private static final int LANES = SPECIES.length();

  private VectorRowProjector() {}

  /**
   * Creates the projector.
   *
   * @return the projector
   */
  public static RowProjector create() {
    return new VectorRowProjector();
  }

  @Override
  public void multiplyAdd(float[] x, int n, int in, float[] w, int out, float[] y) {
    int vectorEnd = out - out % LANES;
    int i = 0;
    for (; i + 4 <= n; i += 4) {
      int j = 0;
      for (; j + 2 * LANES <= vectorEnd; j += 2 * LANES) {
        fourRowsTwoVectors(x, i, in, w, out, y, j);
      }
      for (; j < vectorEnd; j += LANES) {
        for (int r = i; r < i + 4; r++) {
          oneRowOneVector(x, r, in, w, out, y, j);
        }
      }
      for (int r = i; r < i + 4; r++) {
        scalarColumns(x, r, in, w, out, y, vectorEnd);
      }
    }
    for (; i < n; i++) {
      for (int j = 0; j < vectorEnd; j += LANES) {
        oneRowOneVector(x, i, in, w, out, y, j);
      }
      scalarColumns(x, i, in, w, out, y, vectorEnd);
    }
  }

  private static void fourRowsTwoVectors(
      float[] x, int row, int in, float[] w, int out, float[] y, int col) {
    int x0 = row * in;
    int x1 = x0 + in;
    int x2 = x1 + in;
    int x3 = x2 + in;
    int y0 = row * out + col;
    int y1 = y0 + out;
    int y2 = y1 + out;
    int y3 = y2 + out;
    FloatVector s00 = FloatVector.fromArray(SPECIES, y, y0);
    FloatVector s01 = FloatVector.fromArray(SPECIES, y, y0 + LANES);
    FloatVector s10 = FloatVector.fromArray(SPECIES, y, y1);
    FloatVector s11 = FloatVector.fromArray(SPECIES, y, y1 + LANES);
    FloatVector s20 = FloatVector.fromArray(SPECIES, y, y2);
    FloatVector s21 = FloatVector.fromArray(SPECIES, y, y2 + LANES);
    FloatVector s30 = FloatVector.fromArray(SPECIES, y, y3);
    FloatVector s31 = FloatVector.fromArray(SPECIES, y, y3 + LANES);
    for (int k = 0, wRow = col; k < in; k++, wRow += out) {
      FloatVector w0 = FloatVector.fromArray(SPECIES, w, wRow);
      FloatVector w1 = FloatVector.fromArray(SPECIES, w, wRow + LANES);
      FloatVector a = FloatVector.broadcast(SPECIES, x[x0 + k]);
      s00 = w0.fma(a, s00);
      s01 = w1.fma(a, s01);
      a = FloatVector.broadcast(SPECIES, x[x1 + k]);
      s10 = w0.fma(a, s10);
      s11 = w1.fma(a, s11);
      a = FloatVector.broadcast(SPECIES, x[x2 + k]);
      s20 = w0.fma(a, s20);
      s21 = w1.fma(a, s21);
      a = FloatVector.broadcast(SPECIES, x[x3 + k]);
      s30 = w0.fma(a, s30);
      s31 = w1.fma(a, s31);
    }
    s00.intoArray(y, y0);
    s01.intoArray(y, y0 + LANES);
    s10.intoArray(y, y1);
    s11.intoArray(y, y1 + LANES);
    s20.intoArray(y, y2);
    s21.intoArray(y, y2 + LANES);
    s30.intoArray(y, y3);
    s31.intoArray(y, y3 + LANES);
  }

  private static void oneRowOneVector(
      float[] x, int row, int in, float[] w, int out, float[] y, int col) {
    int xRow = row * in;
    int yAt = row * out + col;
    FloatVector s = FloatVector.fromArray(SPECIES, y, yAt);
    for (int k = 0, wRow = col; k < in; k++, wRow += out) {
      s =
          FloatVector.fromArray(SPECIES, w, wRow)
              .fma(FloatVector.broadcast(SPECIES, x[xRow + k]), s);
    }
    s.intoArray(y, yAt);
  }

  private static void scalarColumns(
      float[] x, int row, int in, float[] w, int out, float[] y, int from) {
    int xRow = row * in;
    int yRow = row * out;
    for (int j = from; j < out; j++) {
      float s = y[yRow + j];
      for (int k = 0; k < in; k++) {
        s = Math.fma(x[xRow + k], w[k * out + j], s);
      }
      y[yRow + j] = s;
    }
  }
}
