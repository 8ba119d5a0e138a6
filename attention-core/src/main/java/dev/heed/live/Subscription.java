package dev.heed.live;

/**
 * A listener's registration with an {@link IncrementalScorer}; {@link #close()} cancels it.
 *
 * <p>Thread safety: safe from any thread. A refresh already delivering events may still call the
 * listener once more after {@link #close()} returns.
 */
public final class Subscription implements AutoCloseable {

  private final Runnable cancel;

  Subscription(Runnable cancel) {
    this.cancel = cancel;
  }

  /** Cancels the subscription: later refreshes do not call the listener. Idempotent. */
  @Override
  public void close() {
    cancel.run();
  }
}
