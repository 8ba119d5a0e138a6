package dev.heed.attention.simd;

import dev.heed.attention.internal.FastExp;
import jdk.incubator.vector.FloatVector;
import jdk.incubator.vector.IntVector;
import jdk.incubator.vector.VectorOperators;
import jdk.incubator.vector.VectorSpecies;

/**
 * {@link FastExp#expNonPositive} lane by lane: the same IEEE-754 operations in the same order, so
 * each lane equals the scalar form bit for bit. Internal, not API.
 *
 * <p>Small enough for C2 to inline into the loops that call it; the vectors then stay in registers
 * (a vector passed to a method that is not inlined is boxed, which the sparse kernel measured as
 * slow). Callers keep it in hot loops only.
 *
 * <p><b>Every caller must pass vectors of {@link #SPECIES}.</b> Measured here on JDK 17: once the
 * dense kernel passed 512-bit vectors and the sparse kernel 256-bit ones in the same JVM, the
 * polluted type profile left this method off the intrinsic path, and both kernels ran 5-10x slower
 * for the rest of the JVM's life (a sweep running both paths showed it; JMH forks running one
 * kernel each did not).
 *
 * <p>Thread safety: stateless.
 */
public final class VectorExp {

  /**
   * The one species of every vector loop in Heed: 256 bits (8 floats, one 8-dim head) where the
   * preferred shape is at least that wide (AVX2, AVX-512), else the preferred one. Not 512 bits
   * even where the hardware has them: on JDK 17, methods mixing 512- and 256-bit vectors (needed
   * for 8-float heads) left their vector operations on the slow, non-intrinsic path.
   */
  public static final VectorSpecies<Float> SPECIES =
      FloatVector.SPECIES_PREFERRED.vectorBitSize() >= 256
          ? FloatVector.SPECIES_256
          : FloatVector.SPECIES_PREFERRED;

  private VectorExp() {}

  /**
   * Returns {@code e^x} in each lane, for lanes {@code x <= 0}; lanes below {@link
   * FastExp#LOWEST_ARGUMENT}, including {@code -Infinity}, give exactly 0.
   *
   * @param x non-positive arguments, of {@link #SPECIES}
   * @return the exponentials, of {@link #SPECIES}
   */
  public static FloatVector expNonPositive(FloatVector x) {
    VectorSpecies<Float> species = x.species();
    // No clamp of x to LOWEST_ARGUMENT first: lanes below it (where the scale bits below would be
    // wrong, or NaN from -Infinity) are replaced by the final blend, and the lanes kept are the
    // same operations on the same x as FastExp. Dropping the clamp saves a vector max (five
    // instructions on AVX); on the 1M-node sparse layer it measured no change.
    FloatVector shifted = x.mul(FastExp.LOG2E).add(FastExp.ROUNDING_MAGIC);
    FloatVector n = shifted.sub(FastExp.ROUNDING_MAGIC);
    FloatVector r = n.fma(FloatVector.broadcast(species, -FastExp.LN2_HI), x);
    r = n.fma(FloatVector.broadcast(species, -FastExp.LN2_LO), r);
    FloatVector p = FloatVector.broadcast(species, FastExp.P0);
    p = p.fma(r, FloatVector.broadcast(species, FastExp.P1));
    p = p.fma(r, FloatVector.broadcast(species, FastExp.P2));
    p = p.fma(r, FloatVector.broadcast(species, FastExp.P3));
    p = p.fma(r, FloatVector.broadcast(species, FastExp.P4));
    p = p.fma(r, FloatVector.broadcast(species, FastExp.P5));
    p = p.fma(r.mul(r), r).add(1f);
    FloatVector scale =
        ((IntVector) shifted.reinterpretAsInts())
            .add(FastExp.EXPONENT_BIAS_FROM_MAGIC)
            .lanewise(VectorOperators.LSHL, 23)
            .reinterpretAsFloats();
    return p.mul(scale).blend(0f, x.lt(FastExp.LOWEST_ARGUMENT));
  }
}
