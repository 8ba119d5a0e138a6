/**
 * Node classification with an {@link dev.heed.model.AttentionModel}: {@link
 * dev.heed.classify.NodeClassifier} takes a graph and {@link dev.heed.classify.NodeFeatures} and
 * returns per-node probabilities, the predicted and top labels, and on request an explanation of
 * each prediction by the neighbours each attention layer weighted most.
 */
package dev.heed.classify;
