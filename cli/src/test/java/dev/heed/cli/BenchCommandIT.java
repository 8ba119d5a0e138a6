package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * {@code heed bench crossover} through the real jar, on a one-size sweep (the full and quick sweeps
 * take minutes; the path-crossover module tests the sweep itself).
 */
class BenchCommandIT {

  @TempDir Path dir;

  @Test
  void tinyCrossoverSweepWritesItsReportAndFiles() throws Exception {
    Path out = dir.resolve("sweep");
    CliProcess.Result r =
        CliProcess.run(
            dir,
            "bench",
            "crossover",
            "--quick",
            "--n",
            "64",
            "--densities",
            "50,100",
            "--threads",
            "1",
            "--out",
            out.toString());
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stdout().contains("Crossover"), r.toString());
    for (String name : new String[] {"crossover.csv", "crossover.png", "crossover.txt"}) {
      assertTrue(Files.size(out.resolve(name)) > 0, name + "\n" + r);
      assertTrue(r.stdout().contains("wrote " + out.resolve(name)), r.toString());
    }
    // Header plus 2 densities x 2 scores at n = 64.
    assertTrue(
        Files.readAllLines(out.resolve("crossover.csv"), StandardCharsets.UTF_8).size() >= 5,
        r.toString());
  }

  @Test
  void badArgumentsAreOneLineErrors() throws Exception {
    CliProcess.Result r = CliProcess.run(dir, "bench", "crossover", "--densities", "0");
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("--densities takes percentages in (0, 100]"), r.toString());
    Path file = Files.writeString(dir.resolve("taken"), "x");
    r = CliProcess.run(dir, "bench", "crossover", "--out", file.toString());
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("is a file; give a folder"), r.toString());
    r = CliProcess.run(dir, "bench", "--help");
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stdout().contains("crossover"), r.toString());
  }
}
