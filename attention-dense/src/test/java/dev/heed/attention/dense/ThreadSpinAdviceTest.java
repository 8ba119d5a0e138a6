package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.Map;
import org.junit.jupiter.api.Test;

class ThreadSpinAdviceTest {

  @Test
  void namesEveryMissingVariableAndNothingWhenBothAreSet() {
    String both = ThreadSpinAdvice.advice(Map.of());
    assertTrue(both.contains("OMP_WAIT_POLICY=PASSIVE"), both);
    assertTrue(both.contains("OPENBLAS_THREAD_TIMEOUT=4"), both);
    String one = ThreadSpinAdvice.advice(Map.of("OMP_WAIT_POLICY", "PASSIVE"));
    assertTrue(one.contains("OPENBLAS_THREAD_TIMEOUT=4") && !one.contains("OMP_WAIT"), one);
    assertNull(
        ThreadSpinAdvice.advice(
            Map.of("OMP_WAIT_POLICY", "PASSIVE", "OPENBLAS_THREAD_TIMEOUT", "4")));
  }
}
