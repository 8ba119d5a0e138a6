package dev.heed.cli;

import java.io.PrintWriter;
import picocli.CommandLine;
import picocli.CommandLine.Command;

/**
 * The {@code heed} command-line tool. Errors print one line on stderr and exit non-zero; {@code
 * --debug} adds the stack trace and debug logging.
 */
@Command(
    name = "heed",
    mixinStandardHelpOptions = true,
    versionProvider = HeedCli.Version.class,
    description = "Runs attention models over graphs on the CPU.",
    subcommands = {
      ClassifyCommand.class,
      InspectCommand.class,
      CheckModelCommand.class,
      TrainCommand.class,
      ReplayCommand.class,
      VerifyCommand.class,
      CalibrateCommand.class,
      BenchCommand.class
    })
public final class HeedCli implements Runnable {

  /** Exit code for a user error: a missing file, a bad argument, malformed input. */
  public static final int EXIT_USER_ERROR = 1;

  /** Exit code for a command-line usage error (picocli's convention). */
  public static final int EXIT_USAGE = 2;

  /** Exit code when {@code verify} or {@code check-model} finds an error above tolerance. */
  public static final int EXIT_VERIFY_FAILED = 3;

  /** Exit code for an unexpected internal error. */
  public static final int EXIT_INTERNAL = 70;

  @CommandLine.Spec CommandLine.Model.CommandSpec spec;

  /**
   * Entry point.
   *
   * @param args command-line arguments
   */
  public static void main(String[] args) {
    System.exit(run(args));
  }

  /**
   * Runs the tool and returns its exit code (for tests and embedding).
   *
   * @param args command-line arguments
   * @return the exit code
   */
  public static int run(String... args) {
    return run(null, null, args);
  }

  /** {@link #run(String...)} writing to the given streams (null: the console's), for tests. */
  static int run(PrintWriter stdout, PrintWriter stderr, String... args) {
    boolean debug = false;
    for (String a : args) {
      debug |= "--debug".equals(a);
    }
    System.setProperty("org.slf4j.simpleLogger.defaultLogLevel", debug ? "debug" : "warn");
    System.setProperty("org.slf4j.simpleLogger.logFile", "System.err");
    System.setProperty("org.nd4j.log.initialization", "false");
    System.setProperty("java.awt.headless", "true");
    final boolean showTraces = debug;
    CommandLine cli = new CommandLine(new HeedCli());
    if (stdout != null) {
      cli.setOut(stdout);
    }
    if (stderr != null) {
      cli.setErr(stderr);
    }
    cli.setExecutionExceptionHandler(
        (ex, cmd, parsed) -> {
          PrintWriter err = cmd.getErr();
          err.println("heed: error: " + describe(ex));
          if (showTraces) {
            ex.printStackTrace(err);
          } else {
            err.println("(run with --debug for details)");
          }
          err.flush();
          return ex instanceof CliException ce
              ? ce.exitCode()
              : isUserError(ex) ? EXIT_USER_ERROR : EXIT_INTERNAL;
        });
    return cli.execute(args);
  }

  private static boolean isUserError(Throwable ex) {
    return ex instanceof IllegalArgumentException
        || ex instanceof java.io.IOException
        || ex instanceof java.io.UncheckedIOException
        || ex instanceof IllegalStateException;
  }

  private static String describe(Throwable ex) {
    String message = ex.getMessage();
    if (ex instanceof java.nio.file.NoSuchFileException) {
      return "file not found: " + message;
    }
    if (message == null || message.isBlank()) {
      return ex.getClass().getSimpleName();
    }
    return message.replace('\n', ' ');
  }

  @Override
  public void run() {
    spec.commandLine().usage(spec.commandLine().getErr());
  }

  /** Reports the version from the jar manifest. */
  static final class Version implements CommandLine.IVersionProvider {
    @Override
    public String[] getVersion() {
      String v = HeedCli.class.getPackage().getImplementationVersion();
      return new String[] {"heed " + (v == null ? "(development build)" : v)};
    }
  }
}
