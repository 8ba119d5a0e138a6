package dev.heed.npy;

import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.util.Arrays;
import java.util.Objects;

/**
 * An immutable n-dimensional array as stored in a {@code .npy} file: an element type, a shape and
 * the raw little-endian data in C (row-major) order. Keeping the raw bytes makes read → write →
 * read exact to the bit (NaN payloads and signed zeros included).
 *
 * <p>A shape of rank 0 ({@code ()}) is a scalar holding one element. Element counts and byte sizes
 * are limited to what one Java array holds.
 *
 * <p>Thread safety: immutable; accessors return copies.
 */
public final class NpyArray {

  private final NpyDataType dataType;
  private final int[] shape;
  private final byte[] data;

  private NpyArray(NpyDataType dataType, int[] shape, byte[] data) {
    this.dataType = dataType;
    this.shape = shape;
    this.data = data;
  }

  /**
   * Wraps bytes that were just read and validated; no copy. For this package only.
   *
   * @param dataType the element type
   * @param shape the shape, already validated
   * @param data little-endian data of exactly {@code elementCount * byteWidth} bytes
   */
  static NpyArray adopt(NpyDataType dataType, int[] shape, byte[] data) {
    assert data.length == elementCount(shape) * dataType.byteWidth();
    return new NpyArray(dataType, shape, data);
  }

  /**
   * Creates a {@code float32} array.
   *
   * @param values input, not modified: the elements in C order
   * @param shape the dimensions, each at least 0; their product must equal {@code values.length}
   * @return the array (a copy of {@code values})
   * @throws IllegalArgumentException if the shape does not match the value count
   */
  public static NpyArray ofFloats(float[] values, int... shape) {
    checkShape(values.length, shape);
    ByteBuffer b = buffer(values.length * 4L);
    b.asFloatBuffer().put(values);
    return new NpyArray(NpyDataType.FLOAT32, shape.clone(), b.array());
  }

  /**
   * Creates a {@code float64} array.
   *
   * @param values input, not modified: the elements in C order
   * @param shape the dimensions; their product must equal {@code values.length}
   * @return the array
   * @throws IllegalArgumentException if the shape does not match the value count
   */
  public static NpyArray ofDoubles(double[] values, int... shape) {
    checkShape(values.length, shape);
    ByteBuffer b = buffer(values.length * 8L);
    b.asDoubleBuffer().put(values);
    return new NpyArray(NpyDataType.FLOAT64, shape.clone(), b.array());
  }

  /**
   * Creates an {@code int32} array.
   *
   * @param values input, not modified: the elements in C order
   * @param shape the dimensions; their product must equal {@code values.length}
   * @return the array
   * @throws IllegalArgumentException if the shape does not match the value count
   */
  public static NpyArray ofInts(int[] values, int... shape) {
    checkShape(values.length, shape);
    ByteBuffer b = buffer(values.length * 4L);
    b.asIntBuffer().put(values);
    return new NpyArray(NpyDataType.INT32, shape.clone(), b.array());
  }

  /**
   * Creates an {@code int64} array.
   *
   * @param values input, not modified: the elements in C order
   * @param shape the dimensions; their product must equal {@code values.length}
   * @return the array
   * @throws IllegalArgumentException if the shape does not match the value count
   */
  public static NpyArray ofLongs(long[] values, int... shape) {
    checkShape(values.length, shape);
    ByteBuffer b = buffer(values.length * 8L);
    b.asLongBuffer().put(values);
    return new NpyArray(NpyDataType.INT64, shape.clone(), b.array());
  }

  /**
   * Returns the element type.
   *
   * @return the type
   */
  public NpyDataType dataType() {
    return dataType;
  }

  /**
   * Returns a copy of the shape.
   *
   * @return the dimensions; empty for a scalar
   */
  public int[] shape() {
    return shape.clone();
  }

  /**
   * Returns the number of dimensions.
   *
   * @return the rank, 0 for a scalar
   */
  public int rank() {
    return shape.length;
  }

  /**
   * Returns one dimension.
   *
   * @param axis in {@code 0..rank-1}
   * @return the extent along {@code axis}
   */
  public int dimension(int axis) {
    return shape[axis];
  }

  /**
   * Returns the number of elements, the product of the shape (1 for a scalar).
   *
   * @return the element count
   */
  public int elementCount() {
    return (int) elementCount(shape);
  }

  /**
   * Returns a copy of the raw little-endian data in C order.
   *
   * @return {@code elementCount * dataType().byteWidth()} bytes
   */
  public byte[] rawData() {
    return data.clone();
  }

  /** Raw data without copying, for this package's writer. */
  byte[] rawDataShared() {
    return data;
  }

  /**
   * Returns the elements as floats. {@code float64} values are rounded to the nearest float (large
   * magnitudes become infinite); integers are converted as by a Java cast. O(elements).
   *
   * @return a new array in C order
   */
  public float[] toFloats() {
    int count = elementCount();
    float[] out = new float[count];
    ByteBuffer b = ByteBuffer.wrap(data).order(ByteOrder.LITTLE_ENDIAN);
    switch (dataType) {
      case FLOAT32 -> b.asFloatBuffer().get(out);
      case FLOAT64 -> {
        for (int i = 0; i < count; i++) {
          out[i] = (float) b.getDouble(i * 8);
        }
      }
      case INT32 -> {
        for (int i = 0; i < count; i++) {
          out[i] = b.getInt(i * 4);
        }
      }
      case INT64 -> {
        for (int i = 0; i < count; i++) {
          out[i] = b.getLong(i * 8);
        }
      }
    }
    return out;
  }

  /**
   * Returns the elements as doubles (exact for every type except {@code int64} values beyond 2⁵³).
   * O(elements).
   *
   * @return a new array in C order
   */
  public double[] toDoubles() {
    int count = elementCount();
    double[] out = new double[count];
    ByteBuffer b = ByteBuffer.wrap(data).order(ByteOrder.LITTLE_ENDIAN);
    switch (dataType) {
      case FLOAT32 -> {
        for (int i = 0; i < count; i++) {
          out[i] = b.getFloat(i * 4);
        }
      }
      case FLOAT64 -> b.asDoubleBuffer().get(out);
      case INT32 -> {
        for (int i = 0; i < count; i++) {
          out[i] = b.getInt(i * 4);
        }
      }
      case INT64 -> {
        for (int i = 0; i < count; i++) {
          out[i] = b.getLong(i * 8);
        }
      }
    }
    return out;
  }

  /**
   * Returns the elements as ints; only for integer types.
   *
   * @return a new array in C order
   * @throws IllegalStateException if the type is a float type, or an {@code int64} value does not
   *     fit in an int (the message gives the index and value)
   */
  public int[] toInts() {
    int count = elementCount();
    int[] out = new int[count];
    ByteBuffer b = ByteBuffer.wrap(data).order(ByteOrder.LITTLE_ENDIAN);
    switch (dataType) {
      case INT32 -> b.asIntBuffer().get(out);
      case INT64 -> {
        for (int i = 0; i < count; i++) {
          long v = b.getLong(i * 8);
          if (v != (int) v) {
            throw new IllegalStateException(
                "int64 value " + v + " at flat index " + i + " does not fit in an int");
          }
          out[i] = (int) v;
        }
      }
      default ->
          throw new IllegalStateException(
              "array holds " + dataType + " values; integers need '<i4' or '<i8'");
    }
    return out;
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof NpyArray other
        && other.dataType == dataType
        && Arrays.equals(other.shape, shape)
        && Arrays.equals(other.data, data);
  }

  @Override
  public int hashCode() {
    return Objects.hash(dataType, Arrays.hashCode(shape), Arrays.hashCode(data));
  }

  @Override
  public String toString() {
    return "NpyArray[" + dataType.descriptor() + ", shape=" + Arrays.toString(shape) + "]";
  }

  static long elementCount(int[] shape) {
    long count = 1;
    for (int d : shape) {
      count *= d;
    }
    return count;
  }

  private static void checkShape(int valueCount, int[] shape) {
    Objects.requireNonNull(shape, "shape");
    long count = 1;
    for (int axis = 0; axis < shape.length; axis++) {
      if (shape[axis] < 0) {
        throw new IllegalArgumentException(
            "shape dimensions must be at least 0, got " + shape[axis] + " at axis " + axis);
      }
      count *= shape[axis];
      if (count > Integer.MAX_VALUE) {
        throw new IllegalArgumentException(
            "shape " + Arrays.toString(shape) + " has more elements than one Java array holds");
      }
    }
    if (count != valueCount) {
      throw new IllegalArgumentException(
          "shape "
              + Arrays.toString(shape)
              + " holds "
              + count
              + " elements but "
              + valueCount
              + " values were given");
    }
  }

  private static ByteBuffer buffer(long bytes) {
    if (bytes > NpyLimits.MAX_JAVA_ARRAY_BYTES) {
      throw new IllegalArgumentException(
          bytes + " bytes of data are more than one Java array holds");
    }
    return ByteBuffer.allocate((int) bytes).order(ByteOrder.LITTLE_ENDIAN);
  }
}
