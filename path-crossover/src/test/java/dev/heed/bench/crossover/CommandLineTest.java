package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;

/** Argument parsing of the crossover runner. */
class CommandLineTest {

  @Test
  void defaultsAreTheFullSweep() {
    CommandLine cli = CommandLine.parse(new String[0]);
    assertEquals(List.of(256, 1024, 4096, 16384), cli.config().nodeCounts());
    assertEquals(List.of(0.001, 0.003, 0.01, 0.03, 0.1, 0.3, 1.0), cli.config().densities());
    assertEquals(Path.of(CrossoverRunner.DEFAULT_OUT), cli.out());
  }

  @Test
  void quickAndOverrides() {
    CommandLine cli =
        CommandLine.parse(
            new String[] {
              "--quick",
              "--out",
              "x/y",
              "--n",
              "64,128",
              "--densities",
              "1,10%,100",
              "--threads",
              "3",
              "--scores",
              "additive"
            });
    assertTrue(cli.config().quick());
    assertEquals(Path.of("x/y"), cli.out());
    assertEquals(List.of(64, 128), cli.config().nodeCounts());
    assertEquals(List.of(0.01, 0.1, 1.0), cli.config().densities());
    assertEquals(3, cli.config().threads());
    assertEquals(List.of(SweepScore.ADDITIVE), cli.config().scores());
  }

  @Test
  void badArgumentsSayWhatWasWrong() {
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class, () -> CommandLine.parse(new String[] {"--bogus"}));
    assertTrue(e.getMessage().contains("--bogus"), e.getMessage());
    e =
        assertThrows(
            IllegalArgumentException.class,
            () -> CommandLine.parse(new String[] {"--densities", "200"}));
    assertTrue(e.getMessage().contains("(0, 100]"), e.getMessage());
    assertThrows(IllegalArgumentException.class, () -> CommandLine.parse(new String[] {"--n"}));
  }
}
