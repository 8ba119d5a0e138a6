package dev.heed.cli;

import picocli.CommandLine.Option;

/** The {@code --debug} option every verb accepts (read early by {@link HeedCli#run}). */
final class DebugOption {
  @Option(
      names = "--debug",
      description = "Print stack traces and debug logging on errors.",
      defaultValue = "false")
  boolean debug;
}
