package dev.heed.attention.dense;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelContractTest;
import dev.heed.attention.KernelOptions;

/**
 * The kernel contract, run against the dense kernel on the route it takes without the Vector API
 * (ND4J's own exponential and softmax ops).
 */
class DenseNd4jRouteKernelContractTest extends AttentionKernelContractTest {

  @Override
  protected AttentionKernel kernel(int threads) {
    return new DenseAttentionKernel(
        new KernelOptions(threads, KernelOptions.DEFAULT_DENSE_MEMORY_BUDGET_BYTES),
        DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
        DenseBlockPlan.MIN_TARGET_ROWS,
        DenseAttentionKernel.UNSHIFTED_EXP_LIMIT,
        null);
  }
}
