package dev.heed.attention;

/**
 * Service interface through which modules contribute kernels, found with {@link
 * java.util.ServiceLoader}. The {@code attention-sparse} module provides the {@link
 * ComputePath#SPARSE} kernel this way, so that {@code attention-core} does not depend on it.
 *
 * <p>Thread safety: implementations must be stateless.
 */
public interface AttentionKernelProvider {

  /**
   * Returns the path this provider's kernels compute on.
   *
   * @return the path
   */
  ComputePath path();

  /**
   * Creates a kernel.
   *
   * @param options the caller's options (threads, memory budget)
   * @return a kernel; never null
   */
  AttentionKernel create(KernelOptions options);
}
