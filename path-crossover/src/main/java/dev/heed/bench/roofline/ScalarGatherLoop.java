package dev.heed.bench.roofline;

/**
 * Plain-Java gather loop, used only when the Vector API module is absent. C2 does not vectorise it
 * (time it against the Vector API loop with {@link GatherProbe#measure(GatherLoop, int, int, int,
 * long, int, long)}), so a limit measured with it understates the machine.
 *
 * <p>Thread safety: stateless.
 */
final class ScalarGatherLoop implements GatherLoop {

  @Override
  public void gather(
      float[] table, int width, int[] indices, int perRow, float[] out, int fromRow, int toRow) {
    for (int o = fromRow; o < toRow; o++) {
      int outBase = o * width;
      int idxBase = o * perRow;
      for (int j = 0; j < width; j++) {
        out[outBase + j] = 0f;
      }
      for (int k = 0; k < perRow; k++) {
        int rowBase = indices[idxBase + k] * width;
        for (int j = 0; j < width; j++) {
          out[outBase + j] += table[rowBase + j];
        }
      }
    }
  }

  @Override
  public String describe() {
    return "scalar Java (Vector API absent: add --add-modules jdk.incubator.vector)";
  }
}
