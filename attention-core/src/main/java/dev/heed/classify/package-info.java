/**
 * Node classification with an {@link dev.heed.model.AttentionModel}: {@link
 * dev.heed.classify.NodeClassifier} takes a graph and {@link dev.heed.classify.NodeFeatures} and
 * returns per-node probabilities, the predicted and top labels, and on request an explanation of
 * each prediction by the neighbours each attention layer weighted most. Chosen nodes are computed
 * over their receptive field only, from a {@link dev.heed.graph.CsrGraph} or from any {@link
 * dev.heed.graph.NeighbourRows} and {@link dev.heed.classify.FeatureRows} (such as one version of a
 * changing graph store). For a graph and features that do not change, {@link
 * dev.heed.classify.StaticGraphScorer} (from {@link
 * dev.heed.classify.NodeClassifier#forStaticGraph}) keeps the layer outputs of high-in-degree rows
 * once, so that each query's work is bounded by the threshold rather than by the hubs' degrees.
 */
package dev.heed.classify;
