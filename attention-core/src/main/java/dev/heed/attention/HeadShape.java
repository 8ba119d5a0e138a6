package dev.heed.attention;

/**
 * The per-node shape of a multi-head attention call: {@code heads} heads, each with a query/key
 * width {@code keyDim} and a value width {@code valueDim}.
 *
 * <p>Arrays passed to a kernel are node-major and head-contiguous: element {@code (node, head, k)}
 * of a query or key array lives at {@code (node * heads + head) * keyDim + k}, and of a value or
 * output array at {@code (node * heads + head) * valueDim + k}. One node's data for all heads is
 * one contiguous run, so a sparse gather touches one place per neighbour.
 *
 * <p>Thread safety: immutable.
 *
 * @param heads number of heads H, at least 1
 * @param keyDim width of each head's query and key terms, at least 1 (1 for additive scores)
 * @param valueDim width of each head's value rows, at least 1
 */
public record HeadShape(int heads, int keyDim, int valueDim) {

  /**
   * Validates the shape.
   *
   * @throws IllegalArgumentException if any dimension is below 1
   */
  public HeadShape {
    if (heads < 1 || keyDim < 1 || valueDim < 1) {
      throw new IllegalArgumentException(
          "heads, keyDim and valueDim must all be at least 1, got heads="
              + heads
              + ", keyDim="
              + keyDim
              + ", valueDim="
              + valueDim);
    }
  }

  /**
   * Returns the number of floats one node occupies in a query or key array, {@code heads * keyDim}.
   *
   * @return the key row width
   */
  public int keyWidth() {
    return heads * keyDim;
  }

  /**
   * Returns the number of floats one node occupies in a value or output array, {@code heads *
   * valueDim}.
   *
   * @return the value row width
   */
  public int valueWidth() {
    return heads * valueDim;
  }
}
