/**
 * Full-batch training in the JVM: network, Adam optimizer, early stopping, progress reporting and
 * the trained parameters it produces.
 */
package dev.heed.train;
