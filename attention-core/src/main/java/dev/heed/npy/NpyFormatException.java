package dev.heed.npy;

import java.io.IOException;

/**
 * Thrown when a {@code .npy} or {@code .npz} file (or a model file built on them) is malformed,
 * uses a feature Heed does not accept, or exceeds a size limit. The message starts with the entry
 * that was being read and says what was wrong and, where possible, how to fix it.
 *
 * <p>Thread safety: immutable after construction.
 */
public final class NpyFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  /** The file or archive entry being read. */
  private final String entry;

  /**
   * Creates the exception.
   *
   * @param entry the file or archive entry being read, for example {@code "weights.npz:W.npy"}
   * @param problem what was wrong
   */
  public NpyFormatException(String entry, String problem) {
    super(entry + ": " + problem);
    this.entry = entry;
  }

  /**
   * Creates the exception with a cause.
   *
   * @param entry the file or archive entry being read
   * @param problem what was wrong
   * @param cause the underlying failure
   */
  public NpyFormatException(String entry, String problem, Throwable cause) {
    super(entry + ": " + problem, cause);
    this.entry = entry;
  }

  /**
   * Returns the file or archive entry that was being read.
   *
   * @return the entry name
   */
  public String entry() {
    return entry;
  }
}
