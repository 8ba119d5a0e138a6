package dev.heed.model;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import java.util.Map;
import java.util.concurrent.ConcurrentHashMap;

/**
 * Supplies kernels to a model. Internal: production models use {@link #fromClassPath}; tests inject
 * a reference kernel.
 */
interface KernelSource {

  /**
   * Returns the kernel for a path.
   *
   * @throws IllegalStateException if none is on the class path
   */
  AttentionKernel kernel(ComputePath path);

  /** Kernels from {@link AttentionKernels#forPath}, created once per path and shared. */
  static KernelSource fromClassPath(KernelOptions options) {
    Map<ComputePath, AttentionKernel> cache = new ConcurrentHashMap<>();
    return path -> cache.computeIfAbsent(path, p -> AttentionKernels.forPath(p, options));
  }
}
