package dev.heed.examples;

import java.util.concurrent.Semaphore;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * How many requests compute at once, and how many may wait for a turn: a request that finds every
 * turn taken and the waiting line full is refused at once (the service answers 503 with {@code
 * Retry-After}), so that load beyond what the service can do costs the client one round trip
 * instead of an unbounded wait, and the service memory for at most {@code running + waiting}
 * requests.
 *
 * <p>Thread safety: safe for any number of threads.
 */
final class Admission {

  /** A turn to compute; closing it gives the turn to the next waiting request. */
  interface Turn extends AutoCloseable {
    @Override
    void close();
  }

  private final Semaphore turns;
  private final int waitingLimit;
  private final AtomicInteger waiting = new AtomicInteger();

  /**
   * @param running requests computing at once, at least 1
   * @param waitingLimit requests that may wait for a turn, at least 0
   */
  Admission(int running, int waitingLimit) {
    if (running < 1 || waitingLimit < 0) {
      throw new IllegalArgumentException(
          "need at least 1 running and 0 waiting requests, got "
              + running
              + " and "
              + waitingLimit);
    }
    this.turns = new Semaphore(running, true);
    this.waitingLimit = waitingLimit;
  }

  /**
   * Takes a turn, waiting for one if the waiting line has room.
   *
   * @return the turn, or null when every turn is taken and the waiting line is full, or the thread
   *     was interrupted while waiting
   */
  Turn enter() {
    if (!turns.tryAcquire()) {
      if (waiting.incrementAndGet() > waitingLimit) {
        waiting.decrementAndGet();
        return null;
      }
      try {
        turns.acquire();
      } catch (InterruptedException e) {
        Thread.currentThread().interrupt();
        return null;
      } finally {
        waiting.decrementAndGet();
      }
    }
    return turns::release;
  }

  /** Requests that may wait for a turn. */
  int waitingLimit() {
    return waitingLimit;
  }

  /** Requests waiting for a turn now. */
  int waiting() {
    return waiting.get();
  }
}
