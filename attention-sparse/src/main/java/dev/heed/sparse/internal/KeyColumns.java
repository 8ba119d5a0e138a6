package dev.heed.sparse.internal;

/**
 * The key table transposed, for scoring runs of consecutive source nodes ({@link
 * PerHeadMath#dotScoresOfRuns}): row c holds key float c of every node, so the keys of consecutive
 * sources in one dimension are side by side and one vector load takes several entries' terms.
 * Filled once per call over the complete pattern: {@code n · keyWidth} floats, O(n · keyWidth) time
 * against the call's O(n² · keyWidth).
 *
 * <p>Thread safety: the returned array is written once, before the rows are split between threads.
 */
final class KeyColumns {

  private KeyColumns() {}

  /**
   * Returns {@code columns[c·n + j] = key[j·keyWidth + c]} for {@code c < keyWidth}, {@code j < n}.
   *
   * @param key input, not modified: n rows of {@code keyWidth} floats
   * @param n number of nodes
   * @param keyWidth floats per key row
   * @return the transposed table, {@code keyWidth} rows of n floats
   */
  static float[] of(float[] key, int n, int keyWidth) {
    float[] columns = new float[Math.multiplyExact(n, keyWidth)];
    for (int j = 0; j < n; j++) {
      int r = j * keyWidth;
      for (int c = 0; c < keyWidth; c++) {
        columns[c * n + j] = key[r + c];
      }
    }
    return columns;
  }
}
