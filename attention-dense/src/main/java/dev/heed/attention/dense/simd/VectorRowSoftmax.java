package dev.heed.attention.dense.simd;

import dev.heed.attention.internal.FastExp;
import dev.heed.attention.internal.RowSoftmax;
import dev.heed.attention.simd.VectorExp;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorShuffle;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link RowSoftmax} on the Vector API, in {@link VectorExp#SPECIES} (256 bits on AVX2 and
 * AVX-512): one pass for the row maximum, one for the exponentials and their sum. The exponential
 * is {@link FastExp}'s polynomial, lane by lane ({@link VectorExp}); tails shorter than a vector
 * use the scalar form. Measured on this project's 2-core machine (n = 4096, 8 heads, 256-row
 * blocks): about 0.7 ns per score on one thread including the copies in and out of ND4J's buffer
 * (0.5 ns with 512-bit vectors, which are not used: see {@link VectorExp}), against 0.8 to 3 ns for
 * ND4J's own {@code Exp} on two threads.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorRowSoftmax implements RowSoftmax {

  // the species the sparse kernel uses too: see VectorExp on mixing species in one JVM
  private static final VectorSpecies<Float> SPECIES = VectorExp.SPECIES;
  private static final int LANES = SPECIES.length();

  // lane permutations i -> i xor 4, 2, 1 for the pairwise horizontal sum (8 or 4 lanes)
  private static final VectorShuffle<Float> XOR4 =
      VectorShuffle.fromOp(SPECIES, i -> LANES >= 8 ? i ^ 4 : i);
  private static final VectorShuffle<Float> XOR2 =
      VectorShuffle.fromOp(SPECIES, i -> LANES >= 4 ? i ^ 2 : i);
  private static final VectorShuffle<Float> XOR1 = VectorShuffle.fromOp(SPECIES, i -> i ^ 1);

  // the lanes of every LANES-bit group of a row's allowed bits: group g at LANE_MASKS[g * LANES],
  // 0 for an allowed pair and -Infinity for another (8 KiB for 8 lanes: stays in the first-level
  // cache, where a float mask per pair did not)
  private static final int LANE_BITS = (1 << LANES) - 1;
  private static final float[] LANE_MASKS = laneMasks();

  private VectorRowSoftmax() {}

  /**
   * Creates the vector implementation, or explains why it cannot run here.
   *
   * @return the implementation
   * @throws UnsupportedOperationException if the preferred vector holds fewer than 4 floats (no
   *     useful SIMD) or more than 8 (not a width {@link VectorExp#SPECIES} takes), with the width
   *     in the message
   */
  public static RowSoftmax create() {
    if (LANES < 4 || LANES > 8) {
      throw new UnsupportedOperationException(
          "the preferred float vector is only "
              + SPECIES.vectorBitSize()
              + " bits wide; ND4J's exponential is as fast");
    }
    return new VectorRowSoftmax();
  }

  @Override
  public String describe() {
    return "vector(" + SPECIES.vectorBitSize() + "-bit)";
  }

  @Override
  public float exponentiateShifted(float[] row, int length) {
    int vectorEnd = length - length % LANES;
    float max = Float.NEGATIVE_INFINITY;
    if (vectorEnd > 0) {
      FloatVector m = FloatVector.fromArray(SPECIES, row, 0);
      for (int x = LANES; x < vectorEnd; x += LANES) {
        m = m.max(FloatVector.fromArray(SPECIES, row, x));
      }
      max = m.reduceLanes(VectorOperators.MAX);
    }
    for (int x = vectorEnd; x < length; x++) {
      max = Math.max(max, row[x]);
    }
    return exponentiateFrom(row, length, max);
  }

  private static float[] laneMasks() {
    if (LANES > 8) {
      return new float[0]; // not used: create() refuses such a species
    }
    float[] masks = new float[(1 << LANES) * LANES];
    for (int group = 0; group < 1 << LANES; group++) {
      for (int lane = 0; lane < LANES; lane++) {
        masks[group * LANES + lane] = ((group >>> lane) & 1) != 0 ? 0f : Float.NEGATIVE_INFINITY;
      }
    }
    return masks;
  }

  /** The mask lanes (0 or -Infinity) of pairs x..x+LANES-1; x is a multiple of LANES. */
  private static FloatVector maskLanes(byte[] allowed, int allowedOffset, int x) {
    int group = (allowed[allowedOffset + (x >>> 3)] >>> (x & 7)) & LANE_BITS;
    return FloatVector.fromArray(SPECIES, LANE_MASKS, group * LANES);
  }

  private static float maskValue(byte[] allowed, int allowedOffset, int x) {
    return RowSoftmax.isAllowed(allowed, allowedOffset, x) ? 0f : Float.NEGATIVE_INFINITY;
  }

  @Override
  public float exponentiateShifted(float[] row, byte[] allowed, int allowedOffset, int length) {
    int vectorEnd = length - length % LANES;
    float max = Float.NEGATIVE_INFINITY;
    if (vectorEnd > 0) {
      FloatVector m = FloatVector.broadcast(SPECIES, Float.NEGATIVE_INFINITY);
      for (int x = 0; x < vectorEnd; x += LANES) {
        FloatVector z =
            FloatVector.fromArray(SPECIES, row, x).add(maskLanes(allowed, allowedOffset, x));
        z.intoArray(row, x);
        m = m.max(z);
      }
      max = m.reduceLanes(VectorOperators.MAX);
    }
    for (int x = vectorEnd; x < length; x++) {
      float z = row[x] + maskValue(allowed, allowedOffset, x);
      row[x] = z;
      max = Math.max(max, z);
    }
    return exponentiateFrom(row, length, max);
  }

  @Override
  public float exponentiateAdditive(
      float query,
      float[] keys,
      float negativeSlope,
      byte[] allowed,
      int allowedOffset,
      float[] row,
      int length) {
    int vectorEnd = length - length % LANES;
    float max = Float.NEGATIVE_INFINITY;
    if (vectorEnd > 0) {
      FloatVector m = FloatVector.broadcast(SPECIES, Float.NEGATIVE_INFINITY);
      if (allowed == null) {
        for (int x = 0; x < vectorEnd; x += LANES) {
          FloatVector z = FloatVector.fromArray(SPECIES, keys, x).add(query);
          z = z.max(z.mul(negativeSlope));
          z.intoArray(row, x);
          m = m.max(z);
        }
      } else {
        for (int x = 0; x < vectorEnd; x += LANES) {
          FloatVector z = FloatVector.fromArray(SPECIES, keys, x).add(query);
          z = z.max(z.mul(negativeSlope)).add(maskLanes(allowed, allowedOffset, x));
          z.intoArray(row, x);
          m = m.max(z);
        }
      }
      max = m.reduceLanes(VectorOperators.MAX);
    }
    for (int x = vectorEnd; x < length; x++) {
      float z = query + keys[x];
      z = Math.max(z, z * negativeSlope);
      if (allowed != null) {
        z += maskValue(allowed, allowedOffset, x);
      }
      row[x] = z;
      max = Math.max(max, z);
    }
    return exponentiateFrom(row, length, max);
  }

  /** Replaces {@code row[x]} by {@code exp(row[x] - max)} and returns the sum of the new values. */
  private static float exponentiateFrom(float[] row, int length, float max) {
    int vectorEnd = length - length % LANES;
    FloatVector acc = FloatVector.zero(SPECIES);
    for (int x = 0; x < vectorEnd; x += LANES) {
      FloatVector p = VectorExp.expNonPositive(FloatVector.fromArray(SPECIES, row, x).sub(max));
      p.intoArray(row, x);
      acc = acc.add(p);
    }
    // a fixed pairwise tree of lane-wise adds (reduceLanes(ADD) leaves the order open, so
    // interpreted and compiled code could differ in the last bit): the same sum on every call,
    // and no allocation per row
    if (LANES >= 8) {
      acc = acc.add(acc.rearrange(XOR4));
    }
    acc = acc.add(acc.rearrange(XOR2));
    acc = acc.add(acc.rearrange(XOR1));
    float sum = acc.lane(0);
    for (int x = vectorEnd; x < length; x++) {
      float p = FastExp.expNonPositive(row[x] - max);
      row[x] = p;
      sum += p;
    }
    return sum;
  }
}
