package dev.heed.attention;

/**
 * Options shared by every kernel.
 *
 * <p>Thread safety: immutable.
 *
 * @param threads number of threads a sparse kernel may use for one call, at least 1 (the calling
 *     thread counts as one)
 * @param denseMemoryBudgetBytes the most scratch memory one dense call may allocate, in bytes, at
 *     least 1 MiB
 */
public record KernelOptions(int threads, long denseMemoryBudgetBytes) {

  /** Default dense scratch budget: 512 MiB. */
  public static final long DEFAULT_DENSE_MEMORY_BUDGET_BYTES = 512L << 20;

  /**
   * Validates the options.
   *
   * @throws IllegalArgumentException if a value is out of range
   */
  public KernelOptions {
    if (threads < 1) {
      throw new IllegalArgumentException("threads must be at least 1, got " + threads);
    }
    if (denseMemoryBudgetBytes < (1L << 20)) {
      throw new IllegalArgumentException(
          "dense memory budget must be at least 1 MiB (1048576 bytes), got "
              + denseMemoryBudgetBytes);
    }
  }

  /**
   * Returns the defaults: one thread per available processor, the default dense budget.
   *
   * @return default options
   */
  public static KernelOptions defaults() {
    return new KernelOptions(
        Runtime.getRuntime().availableProcessors(), DEFAULT_DENSE_MEMORY_BUDGET_BYTES);
  }

  /**
   * Returns a copy with a different thread count.
   *
   * @param newThreads at least 1
   * @return new options
   */
  public KernelOptions withThreads(int newThreads) {
    return new KernelOptions(newThreads, denseMemoryBudgetBytes);
  }

  /**
   * Returns a copy with a different dense memory budget.
   *
   * @param bytes at least 1 MiB
   * @return new options
   */
  public KernelOptions withDenseMemoryBudgetBytes(long bytes) {
    return new KernelOptions(threads, bytes);
  }
}
