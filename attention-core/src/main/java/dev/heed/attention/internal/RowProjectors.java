package dev.heed.attention.internal;

import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Chooses, once per JVM, how the layers' small projections run: on the Vector API when the JVM
 * reads {@code jdk.incubator.vector} (fused multiply-adds, outputs held in registers), else in
 * plain Java ({@link RowProjector#multiplyAddPlain}). Like {@link FiniteScans}, the plain form is
 * chosen without a warning of its own. The two forms round differently (fused against separate
 * multiply and add), so every projection of one JVM uses the same one. Internal, not API.
 *
 * <p>Thread safety: the holder idiom makes the one-time choice safe; everything else is stateless.
 */
public final class RowProjectors {

  private static final String VECTOR_CLASS = "dev.heed.attention.simd.VectorRowProjector";
  private static final Logger LOG = LoggerFactory.getLogger(RowProjectors.class);

  /** Plain Java. */
  private static final RowProjector PLAIN = RowProjector::multiplyAddPlain;

  private RowProjectors() {}

  /**
   * Returns the implementation chosen for this JVM.
   *
   * @return the vector form, or plain Java
   */
  public static RowProjector preferred() {
    return Holder.PREFERRED;
  }

  /**
   * Returns plain Java, for tests and comparisons.
   *
   * @return plain Java
   */
  public static RowProjector plain() {
    return PLAIN;
  }

  private static final class Holder {
    static final RowProjector PREFERRED = choose();
  }

  private static RowProjector choose() {
    if (VectorApiLoader.vectorModule().isEmpty()) {
      LOG.debug("Small projections run in plain Java: the JVM does not read jdk.incubator.vector");
      return PLAIN;
    }
    RowProjector vector =
        VectorApiLoader.load(
            RowProjector.class,
            VECTOR_CLASS,
            null,
            "small projections run in slower plain Java",
            LOG);
    return vector != null ? vector : PLAIN;
  }
}
