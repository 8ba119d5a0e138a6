package dev.heed.live;

/**
 * The memory one {@link LiveSnapshot} holds, counted from array lengths with the layout of a 64-bit
 * JVM with compressed references (16-byte array headers, 4-byte references, 8-byte alignment:
 * common practice for heaps under 32 GiB). Shared structures are counted in full, so two snapshots
 * of one graph together hold less than the sum of their figures.
 *
 * <p>The rows cost {@link #baseGraphBytes()} (a CSR graph: {@code 4·(n+1) + 4·E} bytes) plus {@link
 * #deltaBytes()} for rows changed since the last compaction: per changed row {@code 16 + 4·(1 +
 * changes)} bytes (rounded up to 8) and a 152-byte trie node per block of 32 node indices holding a
 * changed row (plus a few inner nodes). After {@link VersionedGraph#compact()} the deltas are empty
 * and the rows cost exactly what {@link dev.heed.graph.CsrGraph#storageBytes()} of the same graph
 * does.
 *
 * <p>Thread safety: immutable.
 *
 * @param nodeCount n
 * @param edgeCount E, the row entries over all rows
 * @param baseGraphBytes bytes of the base CSR arrays ({@link
 *     dev.heed.graph.CsrGraph#storageBytes()})
 * @param deltaEntries sources added plus removed over all row deltas
 * @param deltaBytes bytes of the row deltas and the trie that holds them
 * @param baseFeatureBytes bytes of the base feature matrix ({@code 4·n·f}) and its missing-row bits
 * @param featureDeltaBytes bytes of feature rows set since the last compaction, with their trie
 * @param idMapBytes bytes of the id map's arrays (not counting the id objects themselves)
 */
public record LiveMemory(
    int nodeCount,
    long edgeCount,
    long baseGraphBytes,
    long deltaEntries,
    long deltaBytes,
    long baseFeatureBytes,
    long featureDeltaBytes,
    long idMapBytes) {

  /**
   * Returns the bytes of the rows: base CSR plus deltas.
   *
   * @return the bytes
   */
  public long graphBytes() {
    return baseGraphBytes + deltaBytes;
  }

  /**
   * Returns the bytes of the rows per row entry, {@link #graphBytes()} / E (0 for no entries).
   *
   * @return bytes per entry
   */
  public double graphBytesPerEdge() {
    return edgeCount == 0 ? 0 : graphBytes() / (double) edgeCount;
  }

  /**
   * Returns every byte counted: rows, features and the id map's arrays.
   *
   * @return the bytes
   */
  public long totalBytes() {
    return graphBytes() + baseFeatureBytes + featureDeltaBytes + idMapBytes;
  }
}
