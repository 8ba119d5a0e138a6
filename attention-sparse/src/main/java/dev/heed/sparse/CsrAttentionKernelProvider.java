package dev.heed.sparse;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelProvider;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.sparse.internal.CsrAttentionKernel;
import dev.heed.sparse.internal.CsrKernelVariant;

/**
 * Contributes the {@link ComputePath#SPARSE} kernel to {@link
 * dev.heed.attention.AttentionKernels#forPath}, through {@link java.util.ServiceLoader} (registered
 * in {@code META-INF/services/dev.heed.attention.AttentionKernelProvider}). Applications do not use
 * this class directly: they put {@code dev.heed:attention-sparse} on the class path and call {@code
 * AttentionKernels.forPath(ComputePath.SPARSE, options)}.
 *
 * <p>The kernel runs the Vector API implementation of its inner loops when the JVM was started with
 * {@code --add-modules jdk.incubator.vector}, and plain Java loops otherwise (logging one WARN that
 * names the flag); {@link AttentionKernel#describe()} says which, for example {@code
 * "csr-vector(256-bit of preferred 512-bit), 2 threads"}. The choice is made once per JVM.
 *
 * <p>Thread safety: stateless.
 */
public final class CsrAttentionKernelProvider implements AttentionKernelProvider {

  /** Creates the provider; called by {@link java.util.ServiceLoader}. */
  public CsrAttentionKernelProvider() {}

  /**
   * Returns {@link ComputePath#SPARSE}.
   *
   * @return the sparse path
   */
  @Override
  public ComputePath path() {
    return ComputePath.SPARSE;
  }

  /**
   * Creates a CSR kernel using up to {@code options.threads()} threads per call (the calling thread
   * counts as one), storing the node rows it gathers at {@code options.nodeRowPrecision()}. The
   * dense memory budget does not apply: the kernel's scratch is at most a few hundred kilobytes per
   * thread.
   *
   * @param options the caller's options
   * @return a new, immutable kernel
   */
  @Override
  public AttentionKernel create(KernelOptions options) {
    return CsrAttentionKernel.create(
        options.threads(), CsrKernelVariant.DEFAULT.withNodeRows(options.nodeRowPrecision()));
  }
}
