/**
 * Layers under training, each with a forward-cache / backward contract: graph attention (GAT and
 * GATv2), self-attention, dense, and the masked softmax cross-entropy loss.
 */
package dev.heed.train.layer;
