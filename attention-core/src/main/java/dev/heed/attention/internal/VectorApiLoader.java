package dev.heed.attention.internal;

import java.lang.reflect.InvocationTargetException;
import java.util.Optional;
import org.slf4j.Logger;

/**
 * Loads a kernel's Vector API implementation by name, once, or says why it cannot: the JVM does not
 * read {@code jdk.incubator.vector}, a system property switched it off, or the implementation
 * refused this machine. The implementation classes are compiled in a separate pass against the
 * module and never referenced directly, so the rest of Heed runs without it. Internal, not API.
 *
 * <p>Thread safety: stateless.
 */
public final class VectorApiLoader {

  /** The JVM flag that makes the Vector API readable. */
  public static final String VECTOR_FLAG = "--add-modules jdk.incubator.vector";

  private static final String VECTOR_MODULE = "jdk.incubator.vector";

  /** The warm-up of the Vector API's profiles, run before the first implementation is created. */
  static final String WARMUP_CLASS = "dev.heed.attention.simd.VectorProfileWarmup";

  private VectorApiLoader() {}

  /**
   * Returns the Vector API module if the JVM reads it (started with {@link #VECTOR_FLAG}).
   *
   * <p>Heed's module descriptors do not name {@code jdk.incubator.vector} (javac on JDK 17 warns
   * about every incubator module it resolves, which would fail the warnings-as-errors pass), so on
   * the module path a kernel module reads it only after calling {@code getModule().addReads(...)}
   * with this module, from its own code ({@link Module#addReads} only works for the caller's
   * module), before {@link #load}. On the class path that call does nothing.
   *
   * @return the module, or empty when the JVM does not read it
   */
  public static Optional<Module> vectorModule() {
    return ModuleLayer.boot().findModule(VECTOR_MODULE);
  }

  /**
   * Returns the vector implementation, or null for the fallback; logs once which was chosen and why
   * (INFO when switched off, WARN naming {@link #VECTOR_FLAG} when the module is missing or the
   * class cannot be used, DEBUG on success).
   *
   * @param type the interface the implementation provides
   * @param className the implementation, with a public static {@code create()} method that returns
   *     it or throws {@link UnsupportedOperationException} with a reason; in a named module its
   *     package must be exported to {@code dev.heed.core}, and the module must read the Vector API
   *     already (see {@link #vectorModule()})
   * @param switchProperty system property that, set to {@code false}, selects the fallback, or null
   *     for none
   * @param fallback what runs instead, completing "so ..." (for example "CSR attention runs its
   *     slower scalar loops")
   * @param log the caller's logger
   * @param <T> the interface type
   * @return the implementation, or null
   */
  public static <T> T load(
      Class<T> type, String className, String switchProperty, String fallback, Logger log) {
    if (switchProperty != null && "false".equalsIgnoreCase(System.getProperty(switchProperty))) {
      log.info(
          "The Vector API implementation was switched off with -D{}=false, so {}",
          switchProperty,
          fallback);
      return null;
    }
    Optional<Module> vectorModule = vectorModule();
    if (vectorModule.isEmpty()) {
      log.warn(
          "The Java Vector API is not enabled, so {}. Start the JVM with {} to use the vector"
              + " implementation.",
          fallback,
          VECTOR_FLAG);
      return null;
    }
    // The core's own vector classes (the warm-up, the exponential) link against the module.
    VectorApiLoader.class.getModule().addReads(vectorModule.get());
    ProfileWarmup.ensureRun(log);
    try {
      T vector = type.cast(Class.forName(className).getMethod("create").invoke(null));
      log.debug("Loaded the Vector API implementation {}", className);
      return vector;
    } catch (InvocationTargetException e) {
      log.warn(
          "The Java Vector API is enabled but cannot be used here ({}), so {}",
          e.getCause().toString(),
          fallback);
    } catch (ReflectiveOperationException | LinkageError | ClassCastException e) {
      log.warn(
          "{} could not be loaded ({}), so {}. Check that the JVM was started with {}",
          className,
          e.toString(),
          fallback,
          VECTOR_FLAG);
    }
    return null;
  }

  /**
   * Whether the warm-up has run to its end in this JVM (package-private, for tests).
   *
   * @return true once {@link #load} has run the warm-up without an error
   */
  static boolean warmupCompleted() {
    return ProfileWarmup.completed;
  }

  /**
   * Runs {@code VectorProfileWarmup} once per JVM, before any vector implementation is created: on
   * JDK 17 it keeps the JIT from recording type-check traps in the Vector API's shared methods that
   * would later slow large vector kernels 2-3x (see that class). Speed only: if it cannot run, the
   * implementations still compute the same results, and the reason is logged at DEBUG.
   */
  private static final class ProfileWarmup {
    private static boolean attempted;
    private static volatile boolean completed;

    static synchronized void ensureRun(Logger log) {
      if (attempted) {
        return;
      }
      attempted = true;
      long start = System.nanoTime();
      try {
        Class.forName(WARMUP_CLASS).getMethod("run").invoke(null);
        completed = true;
        log.debug(
            "Warmed the Vector API's type profiles in {} ms", (System.nanoTime() - start) / 1e6);
      } catch (InvocationTargetException e) {
        log.debug("The Vector API warm-up failed ({}); speed only", e.getCause().toString());
      } catch (ReflectiveOperationException | LinkageError e) {
        log.debug("The Vector API warm-up could not run ({}); speed only", e.toString());
      }
    }
  }
}
