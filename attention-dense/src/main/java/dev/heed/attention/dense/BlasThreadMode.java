package dev.heed.attention.dense;

import java.util.function.IntConsumer;
import java.util.function.IntSupplier;
import org.nd4j.linalg.api.blas.Blas;
import org.nd4j.linalg.factory.Nd4j;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The BLAS library's thread count, which is process-wide, switched between one thread for small
 * dense calls and the count the process had for everything else. A small call's products are too
 * short to share: each one wakes the BLAS worker, which then competes with the call's own thread
 * for the cores. Measured on 2 cores (n = 512, 4 heads × 16 dims, 150 calls per pattern,
 * alternated): one BLAS thread made a call 1.2–1.3× faster and its timings tight (the 10th to 75th
 * percentile within 8 % instead of 30 %); at n = 768 the two counts tie and at n = 1024 two threads
 * are 1.2–1.3× faster.
 *
 * <p>Switching costs about 0.12 ms (measured through ND4J's {@code Blas.setMaxThreads} either way),
 * and the first product after the count is restored about 2 ms more (dense calls of n = 256 and n =
 * 1024, 4 × 16, alternating: the n = 1024 call took a median 11.0 ms, against 8.9 ms with the
 * switching off), more than is worth paying around every small call, so the mode is switched
 * lazily: a small call sets one thread unless a large call is running, and a large call or a large
 * projection restores the process's count unless a small call is running. While the two kinds
 * overlap on different threads, whichever mode is set stays: a large call may then run its products
 * on one thread (slower; for products a few columns wide OpenBLAS's last bits differ too), a small
 * call on the process's count. After a small call, other ND4J work in the process also runs its
 * BLAS products on one thread until Heed's next large call; {@code
 * -Dheed.dense.smallCallsOneBlasThread=false} keeps the process's count throughout, and then no
 * call splits.
 *
 * <p>A split call (a large call that runs its blocks on {@link #splitThreads} threads of its own,
 * each product on one BLAS thread) sets one thread like a small call, but restores the process's
 * count as soon as the last small or split call running has ended: the two switches cost about 0.24
 * ms against a call of tens of milliseconds or more, and other ND4J work keeps its threads.
 *
 * <p>Thread safety: safe from any thread; every transition is made under one lock.
 */
final class BlasThreadMode {

  private static final Logger LOG = LoggerFactory.getLogger(BlasThreadMode.class);

  /** The system property that turns the switching off ({@code false}). */
  static final String PROPERTY = "heed.dense.smallCallsOneBlasThread";

  private static final BlasThreadMode PROCESS =
      new BlasThreadMode(
          !"false".equalsIgnoreCase(System.getProperty(PROPERTY, "true")),
          () -> blas().getMaxThreads(),
          threads -> blas().setMaxThreads(threads));

  private final boolean enabled;
  private final IntSupplier current;
  private final IntConsumer set;

  private int smallCalls;
  private int splitCalls;
  private int largeCalls;

  /** The count to restore; 0 while the process's own count is set. */
  private int restore;

  /**
   * Creates a mode over a BLAS library's thread count.
   *
   * @param enabled false to leave the count alone
   * @param current reads the count
   * @param set sets the count
   */
  BlasThreadMode(boolean enabled, IntSupplier current, IntConsumer set) {
    this.enabled = enabled;
    this.current = current;
    this.set = set;
  }

  /**
   * Returns the process's mode.
   *
   * @return the mode that ND4J's BLAS library uses
   */
  static BlasThreadMode process() {
    return PROCESS;
  }

  /**
   * Returns how many threads of its own a large call should split its blocks over, each running its
   * products on one BLAS thread ({@link #enterSmall}): the process's BLAS count, so that the call
   * keeps the cores BLAS would have used; 1 (do not split) when the switching is off.
   *
   * @return the process's BLAS thread count, or 1
   */
  synchronized int splitThreads() {
    if (!enabled) {
      return 1;
    }
    return restore != 0 ? restore : current.getAsInt();
  }

  /** A small call begins: one BLAS thread from now on, unless a large call is running. */
  void enterSmall() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      smallCalls++;
      oneThread();
    }
  }

  /** Sets one thread unless a large call is running or one is set already; under the lock. */
  private void oneThread() {
    if (restore == 0 && largeCalls == 0) {
      int threads = current.getAsInt();
      if (threads > 1) {
        set.accept(1);
        restore = threads;
        LOG.debug("BLAS threads {} -> 1 for small or split dense calls", threads);
      }
    }
  }

  /** A small call has ended (after {@link #enterSmall}). */
  void exitSmall() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      smallCalls--;
    }
  }

  /**
   * A large call that splits its blocks over its own threads begins: one BLAS thread from now on,
   * unless a large call that uses BLAS's threads is running (see {@link #splitThreads}).
   */
  void enterSplit() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      splitCalls++;
      oneThread();
    }
  }

  /**
   * A split call has ended (after {@link #enterSplit}): the process's count back at once unless
   * another small or split call is running.
   */
  void exitSplit() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      splitCalls--;
      if (restore != 0 && smallCalls == 0 && splitCalls == 0) {
        set.accept(restore);
        LOG.debug("BLAS threads 1 -> {} after a split dense call", restore);
        restore = 0;
      }
    }
  }

  /**
   * A large call or projection begins: the process's count back, unless a small call is running.
   */
  void enterLarge() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      largeCalls++;
      if (restore != 0 && smallCalls == 0 && splitCalls == 0) {
        set.accept(restore);
        LOG.debug("BLAS threads 1 -> {} for large dense work", restore);
        restore = 0;
      }
    }
  }

  /** A large call or projection has ended (after {@link #enterLarge}). */
  void exitLarge() {
    if (!enabled) {
      return;
    }
    synchronized (this) {
      largeCalls--;
    }
  }

  private static Blas blas() {
    return Nd4j.factory().blas();
  }
}
