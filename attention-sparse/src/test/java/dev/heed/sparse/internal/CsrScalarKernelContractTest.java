package dev.heed.sparse.internal;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelContractTest;

/** The kernel contract on the scalar fallback, forced. Threads are used even for tiny calls. */
class CsrScalarKernelContractTest extends AttentionKernelContractTest {

  @Override
  protected AttentionKernel kernel(int threads) {
    return new CsrAttentionKernel(
        threads, RowMaths.scalar(), CsrKernelVariant.DEFAULT.withMinCostPerThread(1));
  }
}
