package dev.heed.npy;

/**
 * The NumPy element types Heed reads and writes: little-endian 32/64-bit floats and integers. The
 * {@linkplain #descriptor() descriptor} is the {@code 'descr'} string of a {@code .npy} header.
 *
 * <p>Other types (big-endian, bool, unsigned, complex, strings, structured records, Python objects)
 * are rejected by the reader with a message that says how to convert them in NumPy.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum NpyDataType {
  /** IEEE 754 binary32, little-endian, {@code '<f4'} ({@code numpy.float32}). */
  FLOAT32("<f4", 4),
  /** IEEE 754 binary64, little-endian, {@code '<f8'} ({@code numpy.float64}). */
  FLOAT64("<f8", 8),
  /** Two's complement 32-bit integer, little-endian, {@code '<i4'} ({@code numpy.int32}). */
  INT32("<i4", 4),
  /** Two's complement 64-bit integer, little-endian, {@code '<i8'} ({@code numpy.int64}). */
  INT64("<i8", 8);

  private final String descriptor;
  private final int byteWidth;

  NpyDataType(String descriptor, int byteWidth) {
    this.descriptor = descriptor;
    this.byteWidth = byteWidth;
  }

  /**
   * Returns the NumPy type string written in {@code .npy} headers, for example {@code "<f4"}.
   *
   * @return the descriptor
   */
  public String descriptor() {
    return descriptor;
  }

  /**
   * Returns the number of bytes one element occupies.
   *
   * @return 4 or 8
   */
  public int byteWidth() {
    return byteWidth;
  }

  /**
   * Returns whether this is a floating-point type.
   *
   * @return true for {@link #FLOAT32} and {@link #FLOAT64}
   */
  public boolean isFloatingPoint() {
    return this == FLOAT32 || this == FLOAT64;
  }

  /**
   * Finds the type with the given descriptor.
   *
   * @param descriptor a NumPy type string such as {@code "<f4"}
   * @return the type, or null if Heed does not accept it
   */
  static NpyDataType forDescriptor(String descriptor) {
    for (NpyDataType t : values()) {
      if (t.descriptor.equals(descriptor)) {
        return t;
      }
    }
    return null;
  }
}
