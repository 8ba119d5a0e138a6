package dev.heed.train.layer;

/**
 * How a multi-head layer combines its heads (Veličković et al. 2018: concatenation in hidden
 * layers, eq. 5; averaging in the output layer, eq. 6).
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum HeadMerge {
  /** Heads side by side: output width {@code heads * headWidth}. */
  CONCATENATE,
  /** Element-wise mean over heads: output width {@code headWidth}. */
  MEAN;

  /**
   * Returns the merged output width.
   *
   * @param heads number of heads
   * @param headWidth width of each head
   * @return the width after merging
   */
  public int outputWidth(int heads, int headWidth) {
    return this == CONCATENATE ? heads * headWidth : headWidth;
  }
}
