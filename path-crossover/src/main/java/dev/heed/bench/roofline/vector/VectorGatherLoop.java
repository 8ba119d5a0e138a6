package dev.heed.bench.roofline.vector;

import dev.heed.bench.roofline.GatherLoop;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorSpecies;

/**
 * Gather loop with the Vector API: each output row is built a vector at a time, summing the {@code
 * K} gathered rows in a register before one store. Plain Java loops of this form are not
 * auto-vectorised by C2 on JDK 17 or 25 (the scalar loop beside this one measures several times
 * slower), so this is the loop a fast sparse kernel is expected to use.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorGatherLoop implements GatherLoop {

  private static final VectorSpecies<Float> SPECIES = FloatVector.SPECIES_PREFERRED;

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
