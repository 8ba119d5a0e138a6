package dev.heed.sparse;

import dev.heed.sparse.internal.RowMath;
import java.lang.reflect.InvocationTargetException;
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

  /** The JVM flag that makes the Vector API readable. */
  static final String VECTOR_FLAG = "--add-modules jdk.incubator.vector";

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

  private static final String VECTOR_MODULE = "jdk.incubator.vector";
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
    if ("false".equalsIgnoreCase(System.getProperty(VECTOR_PROPERTY))) {
      LOG.info(
          "CSR attention uses its scalar loops: the Vector API implementation was switched off"
              + " with -D{}=false",
          VECTOR_PROPERTY);
      return ScalarRowMath.INSTANCE;
    }
    if (ModuleLayer.boot().findModule(VECTOR_MODULE).isEmpty()) {
      LOG.warn(
          "The Java Vector API is not enabled, so CSR attention runs its slower scalar loops."
              + " Start the JVM with {} to use the vector implementation.",
          VECTOR_FLAG);
      return ScalarRowMath.INSTANCE;
    }
    try {
      RowMath vector = (RowMath) Class.forName(VECTOR_CLASS).getMethod("create").invoke(null);
      LOG.debug("CSR attention uses {}", vector.describe());
      return vector;
    } catch (InvocationTargetException e) {
      LOG.warn(
          "The Java Vector API is enabled but cannot be used here ({}); CSR attention runs its"
              + " scalar loops",
          e.getCause().toString());
    } catch (ReflectiveOperationException | LinkageError | ClassCastException e) {
      LOG.warn(
          "The vector implementation of CSR attention could not be loaded ({}); it runs its"
              + " scalar loops. Check that the JVM was started with {}",
          e.toString(),
          VECTOR_FLAG);
    }
    return ScalarRowMath.INSTANCE;
  }
}
