package dev.heed.train;

/**
 * Receives progress once per epoch, on the training thread. An exception it throws ends the
 * training run and reaches the caller of {@link FullBatchTrainer#train}.
 *
 * <p>Thread safety: called from one thread at a time.
 */
@FunctionalInterface
public interface TrainingListener {

  /** A listener that ignores everything. */
  TrainingListener NONE = progress -> {};

  /**
   * Called after each epoch.
   *
   * @param progress the epoch's figures
   */
  void onEpoch(EpochProgress progress);
}
