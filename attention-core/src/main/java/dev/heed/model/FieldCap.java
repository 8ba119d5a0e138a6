package dev.heed.model;

/**
 * Upper bounds on the receptive field one call may compute over (see {@link ReceptiveField}): how
 * many distinct nodes it may read and how many attention entries (pairs of a target and a source,
 * summed over the attention layers) it may touch. Planning stops as soon as either bound is passed
 * and throws {@link ReceptiveFieldTooLargeException}, before any projection or attention runs.
 *
 * <pre>{@code
 * FieldCap cap = FieldCap.NONE.withMaxNodes(100_000).withMaxEntries(2_000_000);
 * }</pre>
 *
 * <p>Thread safety: immutable.
 *
 * @param maxNodes the most distinct nodes a field may hold, at least 1
 * @param maxEntries the most attention entries a field may touch over all its layers, at least 0
 */
public record FieldCap(int maxNodes, long maxEntries) {

  /** No cap: every field is allowed, up to the whole graph. */
  public static final FieldCap NONE = new FieldCap(Integer.MAX_VALUE, Long.MAX_VALUE);

  /**
   * Validates the bounds.
   *
   * @throws IllegalArgumentException if {@code maxNodes < 1} or {@code maxEntries < 0}
   */
  public FieldCap {
    if (maxNodes < 1) {
      throw new IllegalArgumentException(
          "maxNodes must be at least 1 (a field holds its targets), got " + maxNodes);
    }
    if (maxEntries < 0) {
      throw new IllegalArgumentException("maxEntries must be at least 0, got " + maxEntries);
    }
  }

  /**
   * Returns a copy with another node bound.
   *
   * @param nodes at least 1
   * @return the new cap
   */
  public FieldCap withMaxNodes(int nodes) {
    return new FieldCap(nodes, maxEntries);
  }

  /**
   * Returns a copy with another entry bound.
   *
   * @param entries at least 0
   * @return the new cap
   */
  public FieldCap withMaxEntries(long entries) {
    return new FieldCap(maxNodes, entries);
  }

  /**
   * Returns whether this cap bounds nothing.
   *
   * @return true for {@link #NONE}'s bounds
   */
  public boolean isNone() {
    return maxNodes == Integer.MAX_VALUE && maxEntries == Long.MAX_VALUE;
  }
}
