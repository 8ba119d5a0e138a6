package dev.heed.graph;

/**
 * Told how far a file reader has got, for a progress display. Readers call it on the thread that
 * reads, every few MiB and at the end of each pass; it should return quickly and must not throw.
 *
 * <p>Thread safety: called from one thread at a time.
 */
@FunctionalInterface
public interface ReadProgress {

  /**
   * Reports progress.
   *
   * @param pass the pass now reading, from 1
   * @param passes how many passes the reader makes over the file
   * @param bytesRead bytes of the file read so far in this pass
   * @param fileBytes the size of the file in bytes
   */
  void onProgress(int pass, int passes, long bytesRead, long fileBytes);
}
