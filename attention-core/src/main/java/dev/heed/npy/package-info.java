/**
 * Safe reading and deterministic writing of NumPy {@code .npy} arrays and {@code .npz} archives,
 * written from the published format description, without ND4J's reader. Every input is treated as
 * untrusted: headers are parsed and validated here, sizes are bounded before allocation, and bad
 * files raise {@link dev.heed.npy.NpyFormatException} naming the entry and the problem.
 */
package dev.heed.npy;
