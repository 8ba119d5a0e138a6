package dev.heed.train;

/**
 * What a training run did, with the metrics of the parameters it kept.
 *
 * <p>Thread safety: immutable.
 *
 * @param epochs epochs run
 * @param bestEpoch the epoch whose parameters were kept (the last one without validation nodes)
 * @param stoppedEarly whether early stopping ended the run before the epoch limit
 * @param trainingLoss loss on the training nodes of the kept parameters (evaluation pass)
 * @param trainingAccuracy accuracy on the training nodes of the kept parameters (class-weighted
 *     when the data has class weights)
 * @param validationLoss loss on the validation nodes of the kept parameters, NaN if none
 * @param validationAccuracy accuracy on the validation nodes of the kept parameters (class-weighted
 *     likewise), NaN if none
 * @param seconds wall-clock seconds the run took
 */
public record TrainingReport(
    int epochs,
    int bestEpoch,
    boolean stoppedEarly,
    double trainingLoss,
    double trainingAccuracy,
    double validationLoss,
    double validationAccuracy,
    double seconds) {}
