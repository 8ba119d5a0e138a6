package dev.heed.bench.roofline.vector;

import dev.heed.attention.simd.VectorExp;
import dev.heed.bench.roofline.GatherLoop;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorSpecies;

/**
 * Gather loop with the Vector API: each output row is built a vector at a time, summing the {@code
 * K} gathered rows in a register before one store. Plain Java loops of this form are not
 * auto-vectorised by C2 on JDK 17 or 25 (the scalar loop beside this one measures several times
 * slower), so this is the loop a fast sparse kernel is expected to use.
 *
 * <p>It uses the kernels' one species ({@link VectorExp#SPECIES}), not the preferred one: the sweep
 * runs this probe and the kernels in one JVM, and a second vector width there left the kernels'
 * shared vector calls ({@code FloatVector.intoArray} and others) on the slow, non-intrinsic path.
 * Measured: with a 512-bit probe first, the sparse dot-product call at n = 2048 and 10 % density
 * took 47-51 ms in the sweep against 10-12 ms in a JVM without the probe (JFR samples in {@code
 * FloatVector.stOp}).
 *
 * <p>Thread safety: stateless.
 */
public final class VectorGatherLoop implements GatherLoop {

  private static final VectorSpecies<Float> SPECIES = VectorExp.SPECIES;

  /** Creates the loop; the reflective loader in {@code GatherProbe} calls this. */
  public VectorGatherLoop() {}

  @Override
  public void gather(
      float[] table, int width, int[] indices, int perRow, float[] out, int fromRow, int toRow) {
    int lanes = SPECIES.length();
    int vectorEnd = width - width % lanes;
    for (int o = fromRow; o < toRow; o++) {
      int outBase = o * width;
      int idxBase = o * perRow;
      int j = 0;
      for (; j < vectorEnd; j += lanes) {
        FloatVector acc = FloatVector.zero(SPECIES);
        for (int k = 0; k < perRow; k++) {
          acc = acc.add(FloatVector.fromArray(SPECIES, table, indices[idxBase + k] * width + j));
        }
        acc.intoArray(out, outBase + j);
      }
      for (; j < width; j++) {
        float s = 0f;
        for (int k = 0; k < perRow; k++) {
          s += table[indices[idxBase + k] * width + j];
        }
        out[outBase + j] = s;
      }
    }
  }

  @Override
  public String describe() {
    return "Vector API, " + SPECIES.vectorBitSize() + "-bit";
  }
}
