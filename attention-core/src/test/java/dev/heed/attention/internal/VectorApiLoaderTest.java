package dev.heed.attention.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.lang.reflect.Method;
import org.junit.jupiter.api.Test;

/**
 * The loader runs the Vector API profile warm-up ({@code VectorProfileWarmup}) before the first
 * vector implementation it creates. What the warm-up is for (no class-check traps recorded in the
 * Vector API's shared methods on JDK 17) is a JIT effect that a unit test cannot observe; it was
 * measured with {@code -XX:+LogCompilation} (DEVELOPERS.md, "Vector API lessons"). This test guards
 * the wiring: that the warm-up is found, runs to its end, and has no visible result.
 */
class VectorApiLoaderTest {

  @Test
  void warmupRunsBeforeTheFirstVectorImplementation() {
    // the build passes --add-modules jdk.incubator.vector and this property to the test JVM
    if (!Boolean.getBoolean("heed.test.expectVector")) {
      return;
    }
    FiniteScan scan = FiniteScans.preferred();
    assertTrue(
        scan.getClass().getSimpleName().startsWith("Vector"),
        "expected the Vector API scan, got " + scan.getClass().getName());
    assertTrue(
        VectorApiLoader.warmupCompleted(),
        "the warm-up did not run to its end before the vector scan was created");
  }

  @Test
  void warmupIsStatelessAndRepeatable() throws ReflectiveOperationException {
    if (!Boolean.getBoolean("heed.test.expectVector")) {
      return;
    }
    // The loader first makes the module read the Vector API (these tests run inside the named
    // module dev.heed.core, which reads it only from then on), as it does before any vector class.
    FiniteScans.preferred();
    // by name, as the loader calls it: this source set is compiled without the Vector API module
    Method run = Class.forName(VectorApiLoader.WARMUP_CLASS).getMethod("run");
    float first = (float) run.invoke(null);
    float second = (float) run.invoke(null);
    assertTrue(Float.isFinite(first), "warm-up value " + first);
    assertEquals(first, second, "the warm-up must not keep state between calls");
  }
}
