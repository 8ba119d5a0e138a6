package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.code_intelligence.jazzer.junit.FuzzTest;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;

/**
 * Fuzz targets for the command line's text inputs (Jazzer): the features CSV and the labels CSV,
 * against a fixed graph of six nodes. Allowed outcomes: a table whose rows have the same width and
 * whose labelled nodes are graph nodes, or a {@link CliException} with the user-error exit code and
 * a message; anything else is a finding. Seeds and saved findings: {@code
 * TextInputsFuzzTestInputs/<method>/} in the test resources.
 */
class TextInputsFuzzTest {

  private static final Path DIR = tempDir();
  private static final NodeIndex<String> NODES = nodes();

  private static Path tempDir() {
    try {
      Path dir = Files.createTempDirectory("heed-text-fuzz");
      dir.toFile().deleteOnExit();
      return dir;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private static NodeIndex<String> nodes() {
    try {
      Path graph = Files.writeString(DIR.resolve("graph.csv"), "a,b\nb,c\n0,1\n1,2\n");
      return EdgeListFileBuilder.stringIds(graph).build().nodes();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  @FuzzTest(maxDuration = "60s")
  void readFeatures(byte[] input) throws IOException {
    Path file = Files.write(DIR.resolve("features.csv"), input);
    FeatureFiles.Read read;
    try {
      read =
          FeatureFiles.read(
              file, null, ',', NODES, FeatureFiles.Expected.ANY, ProgressDisplay.off());
    } catch (CliException e) {
      assertUserError(e);
      return;
    }
    int rows = read.table().ids().size();
    assertTrue(rows > 0, "a table without rows");
    assertEquals(rows, read.table().rows().nodeCount());
  }

  @FuzzTest(maxDuration = "60s")
  void readLabels(byte[] input) throws IOException {
    Path file = Files.write(DIR.resolve("labels.csv"), input);
    LabelFiles.Table table;
    try {
      table = LabelFiles.read(file, ',', NODES, NODES.size(), 1);
    } catch (CliException e) {
      assertUserError(e);
      return;
    }
    assertEquals(NODES.size(), table.label().length);
    assertTrue(table.train().length > 0, "no training node");
    int labelled = 0;
    for (int l : table.label()) {
      assertTrue(l >= -1 && l < table.classes().size(), "label index " + l);
      labelled += l >= 0 ? 1 : 0;
    }
    assertEquals(labelled, table.train().length + table.validation().length + table.test().length);
  }

  private static void assertUserError(CliException e) {
    assertEquals(HeedCli.EXIT_USER_ERROR, e.exitCode(), e.getMessage());
    assertFalse(e.getMessage().isBlank(), "an error without a message");
  }
}
