/**
 * Attention models: the layers (graph attention with GAT or GATv2 scores, scaled dot-product
 * self-attention blocks, dense layers and the softmax classification head), the immutable,
 * thread-safe {@link dev.heed.model.AttentionModel} that stacks them, and the open model file
 * format ({@link dev.heed.model.ModelFile}, specified in {@code docs/model-format.md}). Layers come
 * from model files or from each kind's typed builder, which applies the same checks; {@link
 * dev.heed.model.ModelFile#write} is the one writer of the format. Layers run their attention
 * through {@link dev.heed.attention.AttentionKernel}, on either path, over the whole graph or over
 * the {@link dev.heed.model.ReceptiveField} of chosen target nodes (the rows their outputs depend
 * on, with small local CSR patterns), bounded by a {@link dev.heed.model.FieldCap}; a field may
 * stop at the rows whose layer outputs {@link dev.heed.model.KeptHubRows} holds.
 */
package dev.heed.model;
