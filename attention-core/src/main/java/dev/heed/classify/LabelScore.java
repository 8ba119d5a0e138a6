package dev.heed.classify;

/**
 * One class label with its probability for a node.
 *
 * <p>Thread safety: immutable.
 *
 * @param label the label text
 * @param index the label's position in the model's class labels
 * @param probability the model's probability for it, in [0, 1]
 */
public record LabelScore(String label, int index, float probability) {}
