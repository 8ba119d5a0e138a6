package dev.heed.attention.dense;

import dev.heed.attention.internal.RowSoftmax;
import dev.heed.attention.internal.VectorApiLoader;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Chooses, once per JVM, how the dense kernel exponentiates its score blocks: in Java on the Vector
 * API when the JVM reads {@code jdk.incubator.vector}, else with ND4J's own {@code Exp} or {@code
 * SoftMax} ops (with exactly one WARN naming the flag to add). Measured here, the Vector API route
 * is several times faster than ND4J's exponential, which is the largest cost after the two matrix
 * products (see {@code benchmarks/results/dense-kernel.md}).
 *
 * <p>Thread safety: the holder idiom makes the one-time choice safe; everything else is stateless.
 */
final class RowSoftmaxes {

  private static final String VECTOR_CLASS = "dev.heed.attention.dense.simd.VectorRowSoftmax";
  private static final Logger LOG = LoggerFactory.getLogger(RowSoftmaxes.class);

  private RowSoftmaxes() {}

  /**
   * Returns the Vector API implementation, or null when the kernel should use ND4J's ops.
   *
   * @return the implementation chosen for this JVM, or null
   */
  static RowSoftmax preferred() {
    return Holder.PREFERRED;
  }

  private static final class Holder {
    static final RowSoftmax PREFERRED = choose();
  }

  private static RowSoftmax choose() {
    RowSoftmax vector =
        VectorApiLoader.load(
            RowSoftmax.class,
            VECTOR_CLASS,
            null, // tests reach the ND4J route through the kernel's constructor
            "dense attention takes its exponentials with ND4J's slower op",
            LOG);
    if (vector != null) {
      LOG.debug("Dense attention softmax: {}", vector.describe());
    }
    return vector;
  }
}
