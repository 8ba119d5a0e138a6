package dev.heed.attention;

import java.io.IOException;

/**
 * Thrown when a path-cost profile file ({@link PathCosts#read}) is not one: not JSON, another
 * format, a newer format version, or a field missing or out of range. The message names the file,
 * the field, what was expected, and how to make a valid one ({@code heed calibrate}).
 *
 * <p>Thread safety: immutable after construction.
 */
public final class PathCostsFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  PathCostsFormatException(String message) {
    super(message);
  }

  PathCostsFormatException(String message, Throwable cause) {
    super(message, cause);
  }
}
