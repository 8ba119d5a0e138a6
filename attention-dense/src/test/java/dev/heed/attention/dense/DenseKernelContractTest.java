package dev.heed.attention.dense;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelContractTest;
import dev.heed.attention.KernelOptions;

/** The kernel contract, run against the dense (ND4J) kernel. */
class DenseKernelContractTest extends AttentionKernelContractTest {

  @Override
  protected AttentionKernel kernel(int threads) {
    return new DenseAttentionKernelProvider()
        .create(new KernelOptions(threads, KernelOptions.DEFAULT_DENSE_MEMORY_BUDGET_BYTES));
  }
}
