package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.internal.VectorApiLoader;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/** Which implementation runs, and how the kernel is found (JVector practice, STYLE.md). */
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
  void bothKernelsUseOneVectorSpecies() {
    // Both kernels call the shared VectorExp; a second vector width in the same JVM pollutes its
    // type profile and slowed every vector loop 5-10x (measured here on JDK 17, see VectorExp).
    // The kernels name their vector width in describe(): they must agree.
    String sparse = RowMaths.preferred().name();
    String dense = AttentionKernels.forPath(ComputePath.DENSE, KernelOptions.defaults()).describe();
    Matcher sparseBits = Pattern.compile("^vector\\((\\d+)-bit").matcher(sparse);
    Matcher denseBits = Pattern.compile("Java vector\\((\\d+)-bit\\)").matcher(dense);
    if (sparseBits.find() && denseBits.find()) {
      assertEquals(sparseBits.group(1), denseBits.group(1), sparse + " against " + dense);
    } else {
      assertTrue(
          !Boolean.getBoolean("heed.test.expectVectorKernel"),
          "expected both kernels on the Vector API: " + sparse + " / " + dense);
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
