package dev.heed.graph;

import java.io.IOException;
import java.nio.file.Path;

/**
 * A line of an edge-list file that is not a valid edge. The message names the file, the line number
 * (1-based, counting every line) and what was wrong.
 *
 * <p>Thread safety: immutable.
 */
public final class EdgeListFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  private final transient Path file;
  private final long lineNumber;
  private final String reason;

  /**
   * Creates the exception.
   *
   * @param file the file that was read
   * @param lineNumber the 1-based line number
   * @param reason what was wrong with the line, without the file and line
   */
  public EdgeListFormatException(Path file, long lineNumber, String reason) {
    super(file + ", line " + lineNumber + ": " + reason);
    this.file = file;
    this.lineNumber = lineNumber;
    this.reason = reason;
  }

  /**
   * Returns the file that was read.
   *
   * @return the path, possibly null after deserialisation
   */
  public Path file() {
    return file;
  }

  /**
   * Returns the 1-based number of the bad line.
   *
   * @return the line number
   */
  public long lineNumber() {
    return lineNumber;
  }

  /**
   * Returns what was wrong with the line.
   *
   * @return the reason, without file and line
   */
  public String reason() {
    return reason;
  }
}
