package dev.heed.cli;

/** An error to report to the user as one line, with a chosen exit code. */
final class CliException extends RuntimeException {

  private static final long serialVersionUID = 1L;

  private final int exitCode;

  CliException(String message, int exitCode) {
    super(message);
    this.exitCode = exitCode;
  }

  int exitCode() {
    return exitCode;
  }
}
