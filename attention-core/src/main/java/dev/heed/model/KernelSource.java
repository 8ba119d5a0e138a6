package dev.heed.model;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.internal.DenseStartUp;
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

  /**
   * Returns the seconds a path's first call would take to start its back end in this JVM, beyond
   * the call itself; 0 by default (injected kernels start nothing).
   */
  default double startUpSeconds(ComputePath path) {
    return 0;
  }

  /**
   * Kernels from {@link AttentionKernels#forPath}, created once per path and shared; the dense path
   * costs {@link DenseStartUp#SECONDS} to start until its back end has started in this JVM.
   */
  static KernelSource fromClassPath(KernelOptions options) {
    Map<ComputePath, AttentionKernel> cache = new ConcurrentHashMap<>();
    return new KernelSource() {
      @Override
      public AttentionKernel kernel(ComputePath path) {
        return cache.computeIfAbsent(path, p -> AttentionKernels.forPath(p, options));
      }

      @Override
      public double startUpSeconds(ComputePath path) {
        return path == ComputePath.DENSE && !DenseStartUp.started() ? DenseStartUp.SECONDS : 0;
      }
    };
  }
}
