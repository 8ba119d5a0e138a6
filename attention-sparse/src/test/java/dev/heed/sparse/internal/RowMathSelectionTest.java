package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.internal.VectorApiLoader;
import org.junit.jupiter.api.Test;

/**
 * Which implementation runs, and how the kernel is found (common practice, as in JVector's tests).
 */
class RowMathSelectionTest {

  // The build runs the tests with -Dheed.test.expectVectorKernel=true and the Vector API module:
  // if the kernel fell back to the scalar loops anyway, the fast path is broken and this fails.
  @Test
  void vectorImplementationRunsWhenTheBuildExpectsIt() {
    String chosen = RowMaths.preferred().name();
    if (Boolean.getBoolean("heed.test.expectVectorKernel")) {
      assertTrue(
          chosen.startsWith("vector("),
          "expected the Vector API implementation (the test JVM has "
              + VectorApiLoader.VECTOR_FLAG
              + "), but "
              + chosen
              + " was chosen");
    }
  }

  @Test
  void serviceLoaderFindsTheSparseKernel() {
    AttentionKernel kernel =
        AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults().withThreads(3));
    assertEquals(ComputePath.SPARSE, kernel.path());
    assertEquals(CsrAttentionKernel.class, kernel.getClass());
    assertEquals("csr-" + RowMaths.preferred().name() + ", 3 threads", kernel.describe());
    assertEquals(
        "csr-scalar, 1 thread",
        new CsrAttentionKernel(
                1, RowMaths.scalar(), CsrKernelVariant.DEFAULT.withMinCostPerThread(1))
            .describe());
  }
}
