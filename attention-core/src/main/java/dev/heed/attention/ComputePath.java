package dev.heed.attention;

/**
 * The two ways Heed computes attention.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum ComputePath {
  /**
   * Row blocks of the full score matrix with BLAS matrix products (ND4J); cost grows with n² per
   * head whatever the pattern.
   */
  DENSE,
  /** One fused pass per CSR row in Java; cost grows with the entry count E. */
  SPARSE
}
