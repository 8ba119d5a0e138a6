package dev.heed.bench.roofline;

/**
 * One implementation of the gather loop that {@link GatherProbe} times: for every output row {@code
 * o} in {@code [fromRow, toRow)}, {@code out[o·w .. o·w+w) = Σ_k table[idx[o·K+k]·w .. +w)} with
 * {@code K = perRow} indices per output row and row width {@code w}. This is the memory access of
 * sparse attention's aggregation step: each CSR entry gathers one source node's value row.
 *
 * <p>Public only so that the Vector API implementation in a sub-package can implement it.
 * Implementations are stateless and thread-safe; threads must write disjoint output rows.
 */
public interface GatherLoop {

  /**
   * Gathers and sums rows.
   *
   * @param table input, not modified: {@code rows · width} floats
   * @param width the row width w, at least 1
   * @param indices input, not modified: {@code perRow} row numbers per output row
   * @param perRow the number of rows K summed into each output row, at least 1
   * @param out output: rows {@code fromRow .. toRow-1} are overwritten
   * @param fromRow first output row
   * @param toRow one past the last output row
   */
  void gather(
      float[] table, int width, int[] indices, int perRow, float[] out, int fromRow, int toRow);

  /**
   * Returns what the loop is, for the report (for example {@code "Vector API, 256-bit"}).
   *
   * @return a short description
   */
  String describe();
}
