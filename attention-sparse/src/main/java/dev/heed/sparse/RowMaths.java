package dev.heed.sparse;

import dev.heed.attention.internal.VectorApiLoader;
import dev.heed.sparse.internal.RowMath;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Chooses the {@link RowMath} implementation once per JVM: the Vector API one when the JVM reads
 * {@code jdk.incubator.vector}, the scalar one otherwise (with exactly one WARN naming the flag to
 * add). The choice is made lazily, on first use, in a holder class.
 *
 * <p>Thread safety: the holder idiom makes the one-time choice safe; everything else is stateless.
 */
final class RowMaths {

  /**
   * System property that, set to {@code false}, keeps the kernel on the scalar loops even when the
   * Vector API is readable (for comparisons and benchmarks). Read once, on first use.
   */
  static final String VECTOR_PROPERTY = "heed.sparse.vector";

  /**
   * System property that, set to {@code false}, keeps every shape on the per-head path, switching
   * off the all-heads path for additive scores with 8 heads of 8 value floats (for A/B
   * comparisons). Read once, on first use.
   */
  static final String ALL_HEADS_PROPERTY = "heed.sparse.allHeads";

  private static final String VECTOR_CLASS = "dev.heed.sparse.simd.VectorRowMath";
  private static final Logger LOG = LoggerFactory.getLogger(RowMaths.class);

  private RowMaths() {}

  /** Returns the implementation chosen for this JVM. */
  static RowMath preferred() {
    return Holder.PREFERRED;
  }

  /** Returns the scalar implementation, whatever was chosen (tests and comparisons). */
  static RowMath scalar() {
    return ScalarRowMath.INSTANCE;
  }

  /** Returns false if {@value #ALL_HEADS_PROPERTY} was set to {@code false} before first use. */
  static boolean allHeadsEnabled() {
    return AllHeadsHolder.ENABLED;
  }

  private static final class AllHeadsHolder {
    static final boolean ENABLED =
        !"false".equalsIgnoreCase(System.getProperty(ALL_HEADS_PROPERTY));
  }

  private static final class Holder {
    static final RowMath PREFERRED = choose();
  }

  private static RowMath choose() {
    // On the module path this module reads the Vector API only once it says so here.
    VectorApiLoader.vectorModule()
        .ifPresent(vectorModule -> RowMaths.class.getModule().addReads(vectorModule));
    RowMath vector =
        VectorApiLoader.load(
            RowMath.class,
            VECTOR_CLASS,
            VECTOR_PROPERTY,
            "CSR attention runs its slower scalar loops",
            LOG);
    if (vector == null) {
      return ScalarRowMath.INSTANCE;
    }
    LOG.debug("CSR attention uses {}", vector.describe());
    return vector;
  }
}
