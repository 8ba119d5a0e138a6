package dev.heed.spark;

import java.nio.ByteBuffer;
import java.nio.ByteOrder;

/**
 * Float and double rows as little-endian bytes, the form vectors take in Spark rows: a binary
 * column costs 4 bytes a float in a shuffle, where an array column boxes and tags every element.
 */
final class FloatBytes {

  private FloatBytes() {}

  /** {@code len} floats of {@code a} from {@code off}, as 4·len bytes. */
  static byte[] of(float[] a, int off, int len) {
    ByteBuffer b = ByteBuffer.allocate(len * Float.BYTES).order(ByteOrder.LITTLE_ENDIAN);
    b.asFloatBuffer().put(a, off, len);
    return b.array();
  }

  /** Reads every float of {@code bytes} into {@code dst} from {@code off}; returns the count. */
  static int read(byte[] bytes, float[] dst, int off) {
    int n = bytes.length / Float.BYTES;
    ByteBuffer.wrap(bytes).order(ByteOrder.LITTLE_ENDIAN).asFloatBuffer().get(dst, off, n);
    return n;
  }

  /**
   * Reads {@code count} floats of {@code bytes}, from float {@code from}, into {@code dst[off..]}.
   */
  static void read(byte[] bytes, int from, int count, float[] dst, int off) {
    ByteBuffer.wrap(bytes, from * Float.BYTES, count * Float.BYTES)
        .slice()
        .order(ByteOrder.LITTLE_ENDIAN)
        .asFloatBuffer()
        .get(dst, off, count);
  }

  /** The floats of {@code bytes} as a new array. */
  static float[] floats(byte[] bytes) {
    float[] out = new float[bytes.length / Float.BYTES];
    read(bytes, out, 0);
    return out;
  }

  /** Every double of {@code a}, as 8·length bytes. */
  static byte[] ofDoubles(double[] a) {
    ByteBuffer b = ByteBuffer.allocate(a.length * Double.BYTES).order(ByteOrder.LITTLE_ENDIAN);
    b.asDoubleBuffer().put(a);
    return b.array();
  }

  /** The doubles of {@code bytes} as a new array. */
  static double[] doubles(byte[] bytes) {
    double[] out = new double[bytes.length / Double.BYTES];
    ByteBuffer.wrap(bytes).order(ByteOrder.LITTLE_ENDIAN).asDoubleBuffer().get(out);
    return out;
  }
}
