package dev.heed.train;

/**
 * Progress after one epoch, as passed to a {@link TrainingListener}.
 *
 * <p>Thread safety: immutable.
 *
 * @param epoch the epoch just finished, from 1
 * @param loss the training loss of this epoch's training pass (with dropout)
 * @param trainingAccuracy accuracy on the training nodes, evaluation pass (no dropout);
 *     class-weighted when the data has class weights (then the balanced accuracy for
 *     inverse-frequency weights)
 * @param validationAccuracy accuracy on the validation nodes (class-weighted likewise), or NaN if
 *     there are none
 * @param validationLoss loss on the validation nodes, or NaN if there are none
 * @param seconds wall-clock seconds since training started
 */
public record EpochProgress(
    int epoch,
    double loss,
    double trainingAccuracy,
    double validationAccuracy,
    double validationLoss,
    double seconds) {}
