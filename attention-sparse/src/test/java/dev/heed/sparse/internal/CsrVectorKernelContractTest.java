package dev.heed.sparse.internal;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernelContractTest;

/**
 * The kernel contract on the implementation this JVM chose: the Vector API one when the test JVM
 * runs with {@code --add-modules jdk.incubator.vector} (as this module's build does; {@link
 * RowMathSelectionTest} fails if it silently fell back). Threads are used even for tiny calls.
 */
class CsrVectorKernelContractTest extends AttentionKernelContractTest {

  @Override
  protected AttentionKernel kernel(int threads) {
    return new CsrAttentionKernel(
        threads, RowMaths.preferred(), CsrKernelVariant.DEFAULT.withMinCostPerThread(1));
  }
}
