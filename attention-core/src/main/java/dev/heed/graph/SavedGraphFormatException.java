package dev.heed.graph;

import java.io.IOException;
import java.nio.file.Path;

/**
 * Thrown when a saved graph file ({@link SavedGraphFile}) is truncated, damaged, of another format
 * version or holds other ids. The message names the file and the fault.
 *
 * <p>Thread safety: immutable after construction.
 */
public final class SavedGraphFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  /**
   * Creates the exception.
   *
   * @param file the file read
   * @param problem what is wrong with it
   */
  public SavedGraphFormatException(Path file, String problem) {
    super(file + ": " + problem);
  }
}
