package dev.heed.attention.simd;

import dev.heed.attention.internal.FiniteScan;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link FiniteScan} on the Vector API, in {@link VectorExp#SPECIES} (the one species every vector
 * loop of Heed uses; see {@code DEVELOPERS.md}). Each chunk of {@value #CHUNK} floats is summed as
 * {@code x · 0}, which is 0 for finite {@code x} and NaN for NaN or infinite {@code x}; a chunk
 * whose sum is NaN is searched again with the plain loop for the exact index. Arrays shorter than
 * {@value #SMALL} floats take the plain loop directly: there the vector code's first, interpreted
 * calls would cost more than they save. Internal, not API.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorFiniteScan implements FiniteScan {

  /** Floats per chunk: small enough that the chunk method is compiled early in a large array. */
  static final int CHUNK = 1 << 14;

  /** Arrays shorter than this take the plain loop. */
  static final int SMALL = 1 << 12;

  private static final VectorSpecies<Float> SPECIES = VectorExp.SPECIES;
  private static final int LANES = SPECIES.length();

  private VectorFiniteScan() {}

  /**
   * Creates the scan.
   *
   * @return the scan
   */
  public static FiniteScan create() {
    return new VectorFiniteScan();
  }

  @Override
  public int firstNonFinite(float[] values) {
    if (values.length < SMALL) {
      return FiniteScan.firstNonFinite(values, 0, values.length);
    }
    for (int from = 0; from < values.length; from += CHUNK) {
      int to = Math.min(values.length, from + CHUNK);
      if (!chunkIsFinite(values, from, to)) {
        return FiniteScan.firstNonFinite(values, from, to);
      }
    }
    return -1;
  }

  @Override
  public boolean isFinite(float[] values, int from, int to) {
    for (int c = from; c < to; c += CHUNK) {
      if (!chunkIsFinite(values, c, Math.min(to, c + CHUNK))) {
        return false;
      }
    }
    return true;
  }

  private static boolean chunkIsFinite(float[] values, int from, int to) {
    // four sums, so that the adds do not wait on each other
    FloatVector z0 = FloatVector.zero(SPECIES);
    FloatVector z1 = z0;
    FloatVector z2 = z0;
    FloatVector z3 = z0;
    int i = from;
    for (; i <= to - 4 * LANES; i += 4 * LANES) {
      z0 = z0.add(FloatVector.fromArray(SPECIES, values, i).mul(0f));
      z1 = z1.add(FloatVector.fromArray(SPECIES, values, i + LANES).mul(0f));
      z2 = z2.add(FloatVector.fromArray(SPECIES, values, i + 2 * LANES).mul(0f));
      z3 = z3.add(FloatVector.fromArray(SPECIES, values, i + 3 * LANES).mul(0f));
    }
    FloatVector z = z0.add(z1).add(z2).add(z3);
    if (!z.eq(z).allTrue()) {
      return false;
    }
    for (; i < to; i++) {
      if (!Float.isFinite(values[i])) {
        return false;
      }
    }
    return true;
  }
}
