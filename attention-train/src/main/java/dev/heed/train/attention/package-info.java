/**
 * Attention for training: the forward pass through the serving kernel and the float64 backward pass
 * (softmax, LeakyReLU, dot product) for GAT, GATv2 and scaled dot-product scores over CSR graphs
 * and the complete pattern.
 */
package dev.heed.train.attention;
