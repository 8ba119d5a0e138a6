package dev.heed.live;

/**
 * Object sizes for memory accounting, for a 64-bit JVM with compressed references and class
 * pointers (common practice for heaps under 32 GiB): 16-byte array headers, 4-byte references,
 * sizes rounded up to 8 bytes.
 */
final class Layout {

  private Layout() {}

  /** Bytes of an array of {@code length} elements of {@code elementBytes} each. */
  static long arrayBytes(long length, int elementBytes) {
    return (16L + length * elementBytes + 7) & ~7L;
  }
}
