package dev.heed.npy;

/**
 * Size limits applied while reading untrusted {@code .npy} / {@code .npz} input. Every limit is
 * checked <em>before</em> the memory it guards is allocated: a header that declares a shape whose
 * data exceeds {@link #maxArrayBytes()} is rejected from the header alone, and an archive whose
 * entries inflate to more than {@link #maxTotalBytes()} is rejected as soon as the inflated bytes
 * actually produced cross the limit (so a small compressed "zip bomb" costs at most the limit).
 *
 * <p>Thread safety: immutable.
 *
 * @param maxArrayBytes the largest data section accepted for one array, in bytes; at least 1 and at
 *     most {@link #MAX_JAVA_ARRAY_BYTES}
 * @param maxTotalBytes the most bytes one archive may inflate to in total (all entries, headers
 *     included); at least 1
 * @param maxEntries the most entries one archive may hold; at least 1
 */
public record NpyLimits(long maxArrayBytes, long maxTotalBytes, int maxEntries) {

  /** The largest byte array the JVM reliably allocates, {@code Integer.MAX_VALUE - 8}. */
  public static final long MAX_JAVA_ARRAY_BYTES = Integer.MAX_VALUE - 8L;

  /** Default limit for one array: 512 MiB. */
  public static final long DEFAULT_MAX_ARRAY_BYTES = 512L << 20;

  /** Default limit for a whole archive: 1 GiB. */
  public static final long DEFAULT_MAX_TOTAL_BYTES = 1L << 30;

  /** Default limit on the number of archive entries: 10,000. */
  public static final int DEFAULT_MAX_ENTRIES = 10_000;

  /**
   * Validates the limits.
   *
   * @param maxArrayBytes largest data section of one array, in bytes
   * @param maxTotalBytes most bytes one archive may hold and inflate to
   * @param maxEntries most entries in one archive
   * @throws IllegalArgumentException if a limit is out of range
   */
  public NpyLimits {
    if (maxArrayBytes < 1 || maxArrayBytes > MAX_JAVA_ARRAY_BYTES) {
      throw new IllegalArgumentException(
          "maxArrayBytes must be in 1.." + MAX_JAVA_ARRAY_BYTES + ", got " + maxArrayBytes);
    }
    if (maxTotalBytes < 1) {
      throw new IllegalArgumentException("maxTotalBytes must be at least 1, got " + maxTotalBytes);
    }
    if (maxEntries < 1) {
      throw new IllegalArgumentException("maxEntries must be at least 1, got " + maxEntries);
    }
  }

  /**
   * Returns the defaults: 512 MiB per array, 1 GiB per archive, 10,000 entries.
   *
   * @return default limits
   */
  public static NpyLimits defaults() {
    return new NpyLimits(DEFAULT_MAX_ARRAY_BYTES, DEFAULT_MAX_TOTAL_BYTES, DEFAULT_MAX_ENTRIES);
  }
}
