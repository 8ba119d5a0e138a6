package dev.heed.bench.crossover;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;

/**
 * Supplies the kernel the sweep times for each path. The default, {@link #registered()}, asks
 * {@link AttentionKernels#forPath}; tests inject reference or fake kernels.
 *
 * <p>Thread safety: the sweep calls a factory from one thread, once per path.
 */
@FunctionalInterface
public interface KernelFactory {

  /**
   * Creates the kernel for {@code path}.
   *
   * @param path the path the sweep is about to time
   * @param options threads and dense memory budget
   * @return the kernel
   * @throws RuntimeException if no kernel is available for the path; the sweep then skips that
   *     path's points and says why
   */
  AttentionKernel create(ComputePath path, KernelOptions options);

  /**
   * Returns the factory that uses the kernels registered on the class path.
   *
   * @return {@code AttentionKernels::forPath}
   */
  static KernelFactory registered() {
    return AttentionKernels::forPath;
  }
}
