package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;

/** Runs the packaged {@code heed.jar} as a subprocess, as a user would. */
final class CliProcess {

  /** What a run produced. */
  record Result(int exitCode, String stdout, String stderr) {
    @Override
    public String toString() {
      return "exit " + exitCode + "\n--- stdout ---\n" + stdout + "\n--- stderr ---\n" + stderr;
    }
  }

  private CliProcess() {}

  static Result run(Path workDir, String... args) throws IOException, InterruptedException {
    return runWithJvmOptions(workDir, List.of(), args);
  }

  /** As {@link #run}, with extra JVM options (before {@code -jar}). */
  static Result runWithJvmOptions(Path workDir, List<String> jvmOptions, String... args)
      throws IOException, InterruptedException {
    String jar = System.getProperty("heed.cli.jar");
    assertTrue(jar != null && Files.isRegularFile(Path.of(jar)), "heed.jar not built: " + jar);
    List<String> command = new ArrayList<>();
    command.add(Path.of(System.getProperty("java.home"), "bin", "java").toString());
    command.add("--add-modules");
    command.add("jdk.incubator.vector");
    command.add("-Xmx1g");
    command.add("-Dorg.bytedeco.javacpp.maxphysicalbytes=3g");
    command.addAll(jvmOptions);
    command.add("-jar");
    command.add(jar);
    command.addAll(List.of(args));
    Path out = Files.createTempFile("heed-cli", ".out");
    Path err = Files.createTempFile("heed-cli", ".err");
    try {
      Process p =
          new ProcessBuilder(command)
              .directory(workDir.toFile())
              .redirectOutput(out.toFile())
              .redirectError(err.toFile())
              .redirectInput(ProcessBuilder.Redirect.from(new java.io.File("/dev/null")))
              .start();
      if (!p.waitFor(10, TimeUnit.MINUTES)) {
        p.destroyForcibly();
        throw new AssertionError("heed " + String.join(" ", args) + " did not finish in 10 min");
      }
      return new Result(
          p.exitValue(),
          Files.readString(out, StandardCharsets.UTF_8),
          Files.readString(err, StandardCharsets.UTF_8));
    } finally {
      Files.deleteIfExists(out);
      Files.deleteIfExists(err);
    }
  }
}
