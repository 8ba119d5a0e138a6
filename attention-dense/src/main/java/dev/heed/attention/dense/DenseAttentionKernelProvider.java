package dev.heed.attention.dense;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelProvider;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import java.util.Objects;

/**
 * Provides the {@link ComputePath#DENSE} kernel: attention in row blocks of the n×n score matrix,
 * with ND4J (BLAS gemm for the two matrix products, ND4J's native softmax).
 *
 * <p>Registered in {@code META-INF/services/dev.heed.attention.AttentionKernelProvider}, so {@link
 * dev.heed.attention.AttentionKernels#forPath AttentionKernels.forPath(ComputePath.DENSE, options)}
 * finds it; it may also be used directly:
 *
 * <pre>{@code
 * AttentionKernel dense =
 *     new DenseAttentionKernelProvider().create(new KernelOptions(1, 256L << 20));
 * }</pre>
 *
 * <p>What the options mean on this path:
 *
 * <ul>
 *   <li>{@link KernelOptions#denseMemoryBudgetBytes()} bounds the scratch memory one call allocates
 *       (off-heap ND4J arrays plus Java scratch): the per-head repacked inputs plus one block of
 *       target rows. The block height is derived from it; a call that cannot fit even a one-row
 *       block throws {@link dev.heed.attention.MemoryBudgetExceededException}.
 *   <li>{@link KernelOptions#threads()} is <b>not</b> applied to the matrix products (nor to ND4J's
 *       exponential, on the route without the Vector API): their threads follow ND4J's and
 *       OpenBLAS's count, which is process-wide and set at start-up by {@code OMP_NUM_THREADS}
 *       (default: the core count). Small calls (n below 725) run on the calling thread with that
 *       count set to one; large calls with dot-product or additive scores on the Vector API route
 *       split their blocks over as many threads of their own as that count, each product on one
 *       BLAS thread, softmax included, and set the count back when they end. The work that runs in
 *       Java in other large calls (the GATv2 score loops, the Vector API softmax) uses up to {@code
 *       threads} threads of its own per call.
 * </ul>
 *
 * <p>Thread safety: stateless; safe from any thread. The kernels it creates are immutable and may
 * be called from many threads at once.
 */
public final class DenseAttentionKernelProvider implements AttentionKernelProvider {

  static {
    Nd4jQuietStart.ensure(); // before any ND4J class initialises
  }

  /** Creates the provider; {@link java.util.ServiceLoader} calls this. */
  public DenseAttentionKernelProvider() {}

  /**
   * Returns {@link ComputePath#DENSE}.
   *
   * @return the dense path
   */
  @Override
  public ComputePath path() {
    return ComputePath.DENSE;
  }

  /**
   * Creates a dense kernel with the given options. Cheap: no ND4J memory is allocated until a call.
   *
   * @param options threads (for the Java work of calls that are not split: GATv2 scores, softmax)
   *     and the dense memory budget
   * @return an immutable dense kernel
   * @throws NullPointerException if {@code options} is null
   */
  @Override
  public AttentionKernel create(KernelOptions options) {
    Objects.requireNonNull(options, "options");
    ThreadSpinAdvice.sayOnce();
    return new DenseAttentionKernel(
        options,
        DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
        DenseBlockPlan.SPLIT_TARGET_BLOCK_FLOATS,
        DenseAttentionKernel.SPLIT_MIN_PAIRS,
        DenseBlockPlan.MIN_TARGET_ROWS,
        DenseAttentionKernel.UNSHIFTED_EXP_LIMIT,
        RowSoftmaxes.preferred());
  }
}
