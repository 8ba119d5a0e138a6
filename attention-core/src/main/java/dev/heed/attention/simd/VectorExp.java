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
 * <p>Thread safety: stateless.
 */
public final class VectorExp {

  private VectorExp() {}

  /**
   * Returns {@code e^x} in each lane, for lanes {@code x <= 0}; lanes below {@link
   * FastExp#LOWEST_ARGUMENT}, including {@code -Infinity}, give exactly 0.
   *
   * @param x non-positive arguments
   * @return the exponentials, in the species of {@code x}
   */
  public static FloatVector expNonPositive(FloatVector x) {
    VectorSpecies<Float> species = x.species();
    FloatVector xc = x.max(FastExp.LOWEST_ARGUMENT);
    FloatVector shifted = xc.mul(FastExp.LOG2E).add(FastExp.ROUNDING_MAGIC);
    FloatVector n = shifted.sub(FastExp.ROUNDING_MAGIC);
    FloatVector r = n.fma(FloatVector.broadcast(species, -FastExp.LN2_HI), xc);
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
