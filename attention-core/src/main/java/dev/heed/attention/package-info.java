/**
 * The attention kernel interface shared by the dense and sparse paths, the score functions (GAT
 * additive, GATv2, scaled dot-product), and the front door that chooses and validates kernels.
 */
package dev.heed.attention;
