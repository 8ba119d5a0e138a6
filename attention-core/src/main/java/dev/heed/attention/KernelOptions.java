package dev.heed.attention;

import java.util.Objects;

/**
 * Options shared by every kernel.
 *
 * <p>Thread safety: immutable.
 *
 * @param threads number of threads a sparse kernel may use for one call, at least 1 (the calling
 *     thread counts as one)
 * @param denseMemoryBudgetBytes the most scratch memory one dense call may allocate, in bytes, at
 *     least 1 MiB
 * @param nodeRowPrecision how a sparse kernel stores the node rows it gathers, where it copies them
 *     into a table ({@link NodeRowPrecision}: what it applies to and the error bound); default
 *     {@link NodeRowPrecision#FLOAT32}
 */
public record KernelOptions(
    int threads, long denseMemoryBudgetBytes, NodeRowPrecision nodeRowPrecision) {

  /** Default dense scratch budget: 512 MiB. */
  public static final long DEFAULT_DENSE_MEMORY_BUDGET_BYTES = 512L << 20;

  /**
   * Validates the options.
   *
   * @throws IllegalArgumentException if a value is out of range
   * @throws NullPointerException if {@code nodeRowPrecision} is null
   */
  public KernelOptions {
    Objects.requireNonNull(nodeRowPrecision, "nodeRowPrecision");
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
   * Creates options with float32 node rows ({@link NodeRowPrecision#FLOAT32}).
   *
   * @param threads threads one sparse call may use, at least 1
   * @param denseMemoryBudgetBytes the most scratch one dense call may allocate, at least 1 MiB
   * @throws IllegalArgumentException if a value is out of range
   */
  public KernelOptions(int threads, long denseMemoryBudgetBytes) {
    this(threads, denseMemoryBudgetBytes, NodeRowPrecision.FLOAT32);
  }

  /**
   * Returns the defaults: one thread per available processor, the default dense budget, float32
   * node rows.
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
    return new KernelOptions(newThreads, denseMemoryBudgetBytes, nodeRowPrecision);
  }

  /**
   * Returns a copy with a different dense memory budget.
   *
   * @param bytes at least 1 MiB
   * @return new options
   */
  public KernelOptions withDenseMemoryBudgetBytes(long bytes) {
    return new KernelOptions(threads, bytes, nodeRowPrecision);
  }

  /**
   * Returns a copy whose sparse kernels store gathered node rows at another precision, for example
   * {@code KernelOptions.defaults().withNodeRowPrecision(NodeRowPrecision.BFLOAT16)}.
   *
   * @param precision the precision ({@link NodeRowPrecision}: what it applies to, the error bound)
   * @return new options
   */
  public KernelOptions withNodeRowPrecision(NodeRowPrecision precision) {
    return new KernelOptions(threads, denseMemoryBudgetBytes, precision);
  }
}
