/**
 * Trained parameters in a plain form (named float32 tensors with shapes, plus layer
 * hyper-parameters) and the interface that writes them, to be bound to the Heed model file format.
 */
package dev.heed.train.model;
