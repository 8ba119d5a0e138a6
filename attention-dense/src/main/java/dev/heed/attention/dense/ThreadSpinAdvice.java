package dev.heed.attention.dense;

import java.util.ArrayList;
import java.util.List;
import java.util.Map;
import java.util.concurrent.atomic.AtomicBoolean;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Says once per JVM, at INFO, which environment variables would stop the native BLAS and OpenMP
 * threads behind the dense path from spinning on a core after each call. They are read when the
 * native libraries start, so Heed cannot set them itself; the {@code heed} launcher does.
 *
 * <ul>
 *   <li>{@code OMP_WAIT_POLICY=PASSIVE}: idle OpenMP threads sleep at once (GNU libgomp documents
 *       the variable) instead of spinning between ND4J's calls.
 *   <li>{@code OPENBLAS_THREAD_TIMEOUT=4}: OpenBLAS's own worker threads wait 2^4 cycles, not the
 *       default of about 2^28 (from memory of OpenBLAS's thread server), before they sleep.
 *       Measured here: without it each dense call of n = 2048 left about 50 ms of CPU time spinning
 *       after the call, which a sparse call or any other thread that followed had to share a core
 *       with.
 * </ul>
 *
 * <p>Thread safety: safe from any thread; the message is logged at most once.
 */
final class ThreadSpinAdvice {

  private static final Logger LOG = LoggerFactory.getLogger(ThreadSpinAdvice.class);
  private static final AtomicBoolean SAID = new AtomicBoolean();

  private ThreadSpinAdvice() {}

  /** Logs the advice for this process's environment, the first time only. */
  static void sayOnce() {
    if (!SAID.compareAndSet(false, true)) {
      return;
    }
    String advice = advice(System.getenv());
    if (advice != null) {
      LOG.info(advice);
    }
  }

  /**
   * Returns the advice for {@code env}, or null when nothing is missing.
   *
   * @param env environment variables
   * @return one line naming the variables to set, or null
   */
  static String advice(Map<String, String> env) {
    List<String> missing = new ArrayList<>();
    if (env.get("OMP_WAIT_POLICY") == null) {
      missing.add("OMP_WAIT_POLICY=PASSIVE");
    }
    if (env.get("OPENBLAS_THREAD_TIMEOUT") == null) {
      missing.add("OPENBLAS_THREAD_TIMEOUT=4");
    }
    if (missing.isEmpty()) {
      return null;
    }
    return "Dense attention: native BLAS/OpenMP threads spin on a core after each call and slow"
        + " whatever runs next; set "
        + String.join(" and ", missing)
        + " in the environment before the JVM starts (the heed launcher does)";
  }
}
