package dev.heed.attention.internal;

/**
 * Whether this JVM has started the dense path's back end (ND4J and its native libraries), and what
 * starting it costs: about {@value #SECONDS} s once per JVM (measured on the reference machines,
 * {@code benchmarks/RESULTS.md}), far more than the small attention calls that a calibrated cost
 * model can find faster on the dense path. Models choosing their path with {@code AUTO} charge that
 * cost to the dense path until the back end has started. Internal, not API.
 *
 * <p>Thread safety: one volatile flag, only ever set.
 */
public final class DenseStartUp {

  /** Seconds the dense back end's first call takes beyond a warm one. */
  public static final double SECONDS = 1.5;

  private static volatile boolean started;

  private DenseStartUp() {}

  /**
   * Records that the dense back end is starting; the dense module calls it before ND4J's first use.
   */
  public static void markStarted() {
    if (!started) {
      started = true;
    }
  }

  /**
   * Returns whether the dense back end has started in this JVM.
   *
   * @return true once {@link #markStarted} has been called
   */
  public static boolean started() {
    return started;
  }
}
