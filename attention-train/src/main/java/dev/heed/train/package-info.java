/**
 * Full-batch training in the JVM: network, Adam optimizer, early stopping and progress reporting. A
 * trained network becomes a served {@link dev.heed.model.AttentionModel} through the model
 * package's layer builders ({@link dev.heed.train.TrainingNetwork#toModel}), saved by {@link
 * dev.heed.model.ModelFile#write}.
 */
package dev.heed.train;
