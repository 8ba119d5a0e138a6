package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.NodeIndex;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** How FeatureFiles finds the ids of a features file, and the hints its errors give. */
class FeatureFilesTest {

  @TempDir Path dir;

  private NodeIndex<String> nodes(String edges) throws IOException {
    return EdgeListFileBuilder.stringIds(Files.writeString(dir.resolve("g.csv"), edges))
        .build()
        .nodes();
  }

  private FeatureFiles.Read read(Path file, Path ids, NodeIndex<String> nodes) throws IOException {
    return FeatureFiles.read(
        file, ids, ',', nodes, FeatureFiles.Expected.ANY, ProgressDisplay.off());
  }

  private Path npy(String name, int rows) throws IOException {
    float[] v = new float[rows * 2];
    for (int i = 0; i < v.length; i++) {
      v[i] = i * 0.25f - 1;
    }
    return Files.write(dir.resolve(name), Npy.toBytes(NpyArray.ofFloats(v, rows, 2)));
  }

  @Test
  void npyWithoutIdsNeedsRowNumbersAndOtherwiseSaysHowToGiveIds() throws IOException {
    Path x = npy("x.npy", 4);
    // ids 2, 0, 3: row numbers of a 4-row matrix; id 1 has no edge, so it is a row only
    FeatureFiles.Read positional = read(x, null, nodes("2,0\n0,3\n"));
    assertEquals(List.of("0", "1", "2", "3"), positional.table().ids());
    for (String edges : List.of("a,0\n", "04,1\n", "1,4\n", "-1,2\n")) {
      CliException e = assertThrows(CliException.class, () -> read(x, null, nodes(edges)), edges);
      assertTrue(e.getMessage().contains("are not row numbers 0..3"), e.getMessage());
      assertTrue(e.getMessage().contains("--feature-ids FILE"), e.getMessage());
      assertTrue(e.getMessage().contains("a file x.ids beside it"), e.getMessage());
    }
    Files.writeString(dir.resolve("x.ids"), "d\nc\nb\na\n");
    assertEquals(List.of("d", "c", "b", "a"), read(x, null, nodes("a,b\n")).table().ids());
    Files.writeString(dir.resolve("other.txt"), "w\nx\ny\nz\n");
    assertEquals(
        List.of("w", "x", "y", "z"),
        read(x, dir.resolve("other.txt"), nodes("a,b\n")).table().ids());
  }

  @Test
  void featureIdsOnlyForNpyAndDelimiterHints() throws IOException {
    Path csv = Files.writeString(dir.resolve("x.csv"), "a,1,2\nb,3,4\n");
    Path ids = Files.writeString(dir.resolve("ids.txt"), "a\nb\n");
    CliException usage = assertThrows(CliException.class, () -> read(csv, ids, nodes("a,b\n")));
    assertEquals(HeedCli.EXIT_USAGE, usage.exitCode());
    Path semicolons = Files.writeString(dir.resolve("y.csv"), "a;1;2\nb;3;4\n");
    CliException hint =
        assertThrows(CliException.class, () -> read(semicolons, null, nodes("a,b\n")));
    assertTrue(
        hint.getMessage().endsWith("the line holds ';': use --delimiter ';'"), hint.getMessage());
    assertEquals("", FeatureFiles.delimiterHint(List.of("a", "b"), ','));
    assertEquals(
        "; the line holds tab: use --delimiter tab",
        FeatureFiles.delimiterHint(List.of("a\tb"), ','));
  }
}
