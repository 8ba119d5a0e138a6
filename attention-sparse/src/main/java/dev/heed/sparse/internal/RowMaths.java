package dev.heed.sparse.internal;

import dev.heed.attention.internal.VectorApiLoader;
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
   * Vector API is readable: the one switch left to users, a remedy where the Vector API misbehaves
   * for this kernel alone (the dense path and the input checks keep theirs). Read once, on first
   * use. Tests and benchmarks choose with {@link CsrKernelVariant#vectorLoops()} instead.
   */
  static final String VECTOR_PROPERTY = "heed.sparse.vector";

  private static final String VECTOR_CLASS = "dev.heed.sparse.simd.VectorRowMath";
  private static final Logger LOG = LoggerFactory.getLogger(RowMaths.class);

  private RowMaths() {}

  /** Returns the implementation chosen for this JVM. */
  static RowMath preferred() {
    return Holder.PREFERRED;
  }

  /** Returns the scalar implementation, whatever was chosen (tests and comparisons). */
  static RowMath scalar() {
    return ScalarHolder.SCALAR;
  }

  // Loaded only when asked for: while the vector classes are the only loaded implementations of
  // the row-math interfaces, C2 can call them without a type check (class hierarchy analysis,
  // common practice; not measured separately here).
  private static final class ScalarHolder {
    static final RowMath SCALAR =
        new RowMath(
            "scalar",
            false,
            ScalarPerHeadMath.INSTANCE,
            ScalarAllHeadsMath.INSTANCE,
            ScalarFactoredMath.INSTANCE);
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
      return scalar();
    }
    LOG.debug("CSR attention uses {}", vector.name());
    return vector;
  }
}
