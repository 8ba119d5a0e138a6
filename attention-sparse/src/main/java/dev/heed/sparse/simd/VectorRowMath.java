package dev.heed.sparse.simd;

import dev.heed.attention.simd.VectorExp;
import dev.heed.sparse.internal.AllHeadsMath;
import dev.heed.sparse.internal.RowMath;
import jdk.incubator.vector.FloatVector;

/**
 * Creates the Vector API implementation of the CSR kernel's inner loops: {@link VectorPerHeadMath},
 * {@link VectorAllHeadsMath} and {@link VectorFactoredMath}. Loaded by name, once, by the kernel's
 * implementation chooser; internal to {@code attention-sparse}, not API.
 *
 * <p>Every class here uses one species, {@link VectorExp#SPECIES}: 256 bits (8 floats, one 8-dim
 * head) where the preferred shape is at least that wide, else the preferred one. Not 512 bits even
 * where the hardware has them: on JDK 17 a method mixing 512- and 256-bit vectors (needed for
 * 8-float heads) left its 256-bit stores on the slow, non-intrinsic path, and a second species
 * passed to the shared {@link VectorExp} slowed every vector loop in the JVM. Vectors cross no call
 * that C2 may not inline, horizontal sums are a fixed tree of exact lane-wise adds (never {@code
 * reduceLanes(ADD)}, whose order is unspecified), and the exponential is {@code FastExp}'s
 * polynomial done lane by lane, so results are the scalar forms' bits, on any thread.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorRowMath {

  private VectorRowMath() {}

  /**
   * Creates the vector implementation, or explains why it cannot run here.
   *
   * @return the implementation
   * @throws UnsupportedOperationException if the preferred vector is narrower than 128 bits (no
   *     useful SIMD), with the width in the message
   */
  public static RowMath create() {
    int preferredBits = FloatVector.SPECIES_PREFERRED.vectorBitSize();
    if (preferredBits < 128) {
      throw new UnsupportedOperationException(
          "the preferred float vector is only "
              + preferredBits
              + " bits wide; the scalar loops are as fast");
    }
    return new RowMath(
        "vector("
            + VectorExp.SPECIES.vectorBitSize()
            + "-bit of preferred "
            + preferredBits
            + "-bit)",
        VectorExp.SPECIES.length() == AllHeadsMath.HEADS,
        new VectorPerHeadMath(),
        new VectorAllHeadsMath(),
        new VectorFactoredMath());
  }
}
