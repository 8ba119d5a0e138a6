package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.junit.jupiter.api.Test;

/** The two kernels, in one JVM, run their vector code in one vector width. */
class OneVectorSpeciesTest {

  @Test
  void bothKernelsUseOneVectorSpecies() {
    // Both kernels call the shared VectorExp; a second vector width in the same JVM pollutes its
    // type profile and slowed every vector loop 5-10x (measured on JDK 17, see VectorExp).
    // The kernels name their vector width in describe(): they must agree.
    String sparse =
        AttentionKernels.forPath(ComputePath.SPARSE, KernelOptions.defaults()).describe();
    String dense = AttentionKernels.forPath(ComputePath.DENSE, KernelOptions.defaults()).describe();
    Matcher sparseBits = Pattern.compile("vector\\((\\d+)-bit").matcher(sparse);
    Matcher denseBits = Pattern.compile("Java vector\\((\\d+)-bit\\)").matcher(dense);
    if (sparseBits.find() && denseBits.find()) {
      assertEquals(sparseBits.group(1), denseBits.group(1), sparse + " against " + dense);
    } else {
      assertTrue(
          !Boolean.getBoolean("heed.test.expectVectorSoftmax"),
          "expected both kernels on the Vector API: " + sparse + " / " + dense);
    }
  }
}
