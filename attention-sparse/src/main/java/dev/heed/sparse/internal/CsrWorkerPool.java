package dev.heed.sparse.internal;

import java.util.concurrent.CountDownLatch;
import java.util.concurrent.SynchronousQueue;
import java.util.concurrent.ThreadFactory;
import java.util.concurrent.ThreadPoolExecutor;
import java.util.concurrent.TimeUnit;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicReference;

/**
 * The helper threads of the CSR kernel: one JVM-wide pool of daemon threads named {@code
 * heed-csr-worker-N}, created on first multi-threaded call and reused by every later call. A call
 * that wants {@code T} threads runs its share on the calling thread and hands {@code T - 1} shares
 * to the pool; it returns only after every share has finished.
 *
 * <p>The pool grows to the number of helpers asked for at once and each idle thread ends after
 * {@value #IDLE_SECONDS} s, so nothing is left running after the last call and no shutdown is
 * needed (daemon threads never hold the JVM open).
 *
 * <p>Thread safety: safe for concurrent calls; each call waits only for its own helpers.
 */
final class CsrWorkerPool {

  /** Seconds an idle helper thread lives before it ends. */
  static final int IDLE_SECONDS = 30;

  private CsrWorkerPool() {}

  private static final class Holder {
    static final ThreadPoolExecutor POOL = newPool();
  }

  private static ThreadPoolExecutor newPool() {
    AtomicInteger count = new AtomicInteger();
    ThreadFactory factory =
        task -> {
          Thread t = new Thread(task, "heed-csr-worker-" + count.incrementAndGet());
          t.setDaemon(true);
          return t;
        };
    return new ThreadPoolExecutor(
        0, Integer.MAX_VALUE, IDLE_SECONDS, TimeUnit.SECONDS, new SynchronousQueue<>(), factory);
  }

  /**
   * Runs {@code share} on the calling thread and on {@code helpers} pool threads at once, and
   * returns when all have finished. The first failure of any share is rethrown on the caller.
   *
   * @param helpers number of pool threads, at least 1
   * @param share the work each thread runs; it must claim work items itself
   */
  static void runShared(int helpers, Runnable share) {
    assert helpers >= 1;
    CountDownLatch done = new CountDownLatch(helpers);
    AtomicReference<Throwable> failure = new AtomicReference<>();
    Runnable helper =
        () -> {
          try {
            share.run();
          } catch (Throwable t) {
            failure.compareAndSet(null, t);
          } finally {
            done.countDown();
          }
        };
    int started = 0;
    try {
      for (; started < helpers; started++) {
        Holder.POOL.execute(helper);
      }
      share.run();
    } catch (RuntimeException | Error e) {
      failure.compareAndSet(null, e);
    } finally {
      for (int i = started; i < helpers; i++) {
        done.countDown();
      }
      awaitUninterruptibly(done);
    }
    Throwable t = failure.get();
    if (t instanceof RuntimeException r) {
      throw r;
    } else if (t instanceof Error e) {
      throw e;
    } else if (t != null) {
      throw new IllegalStateException("a CSR attention worker failed", t);
    }
  }

  private static void awaitUninterruptibly(CountDownLatch latch) {
    boolean interrupted = false;
    while (true) {
      try {
        latch.await();
        break;
      } catch (InterruptedException e) {
        interrupted = true;
      }
    }
    if (interrupted) {
      Thread.currentThread().interrupt();
    }
  }
}
