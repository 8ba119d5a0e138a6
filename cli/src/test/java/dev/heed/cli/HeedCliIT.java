package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Drives the real jar for the verbs that need no model or data. */
class HeedCliIT {

  @TempDir Path dir;

  @Test
  void versionAndHelp() throws Exception {
    CliProcess.Result r = CliProcess.run(dir, "--version");
    assertEquals(0, r.exitCode(), r.toString());
    assertTrue(r.stdout().startsWith("heed "), r.toString());
    r = CliProcess.run(dir, "--help");
    assertEquals(0, r.exitCode(), r.toString());
    for (String verb : new String[] {"classify", "inspect", "verify", "calibrate"}) {
      assertTrue(r.stdout().contains(verb), verb + ":\n" + r);
      CliProcess.Result help = CliProcess.run(dir, verb, "--help");
      assertEquals(0, help.exitCode(), help.toString());
      assertTrue(help.stdout().startsWith("Usage: heed " + verb), help.toString());
    }
  }

  @Test
  void unknownVerbIsAUsageError() throws Exception {
    CliProcess.Result r = CliProcess.run(dir, "no-such-verb");
    assertEquals(HeedCli.EXIT_USAGE, r.exitCode(), r.toString());
    assertTrue(r.stderr().contains("no-such-verb"), r.toString());
  }

  @Test
  void verifyPassesOnThisMachine() throws Exception {
    CliProcess.Result r = CliProcess.run(dir, "verify", "--seed", "12345");
    assertEquals(0, r.exitCode(), r.toString());
    for (String expected :
        new String[] {"dense", "sparse", "GATv2", "scaled dot-product", "GAT, 65,536 nodes"}) {
      assertTrue(r.stdout().contains(expected), expected + " missing:\n" + r);
    }
    assertFalse(r.stdout().contains("FAILED"), r.toString());
    assertFalse(r.stderr().contains("Exception"), r.toString());
  }
}
