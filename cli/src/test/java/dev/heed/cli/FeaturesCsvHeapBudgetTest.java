package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.MemoryBudget;
import dev.heed.attention.MemoryBudgetExceededException;
import java.io.BufferedWriter;
import java.io.File;
import java.io.IOException;
import java.net.URISyntaxException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * A features CSV whose rows would not fit the heap fails with {@link MemoryBudgetExceededException}
 * (the bytes needed and the limit), checked before the rows are stored, not with an {@link
 * OutOfMemoryError}: in a child JVM with a 16 MiB heap, and under the configured cap {@value
 * MemoryBudget#MAX_BYTES_PROPERTY}.
 */
class FeaturesCsvHeapBudgetTest {

  @TempDir Path dir;

  /** Runs in the child JVM: reads the features file args[0] and prints what happened. */
  public static void main(String[] args) throws IOException {
    try {
      FeatureFiles.Read read =
          FeatureFiles.read(
              Path.of(args[0]), null, ',', null, FeatureFiles.Expected.ANY, ProgressDisplay.off());
      System.out.println("read " + read.table().ids().size() + " rows");
    } catch (MemoryBudgetExceededException e) {
      System.out.println("refused: " + e.getMessage());
    } catch (OutOfMemoryError e) {
      System.out.println("OutOfMemoryError");
      System.exit(3);
    }
  }

  private Path features(String name, int rows, int f) throws IOException {
    Path file = dir.resolve(name);
    try (BufferedWriter w = Files.newBufferedWriter(file, StandardCharsets.US_ASCII)) {
      StringBuilder line = new StringBuilder();
      for (int r = 0; r < rows; r++) {
        line.setLength(0);
        line.append('n').append(r);
        for (int c = 0; c < f; c++) {
          line.append(',').append((r + c) % 10).append(".5");
        }
        w.append(line.append('\n'));
      }
    }
    return file;
  }

  @Test
  void aFeaturesFileTooLargeForTheHeapIsRefusedWithTheBytesAndTheLimit() throws Exception {
    // 200,000 rows of 8 features: about 30 MiB as rows and ids, 6.4 MiB as one matrix
    Path file = features("large.csv", 200_000, 8);
    List<String> command = new ArrayList<>();
    command.add(Path.of(System.getProperty("java.home"), "bin", "java").toString());
    command.add("-Xmx16m");
    command.add("-cp");
    command.add(classPath());
    command.add(FeaturesCsvHeapBudgetTest.class.getName());
    command.add(file.toString());
    Process child = new ProcessBuilder(command).redirectErrorStream(true).start();
    String output = new String(child.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    assertTrue(child.waitFor(120, TimeUnit.SECONDS), "child JVM did not finish");
    assertEquals(0, child.exitValue(), output);
    assertTrue(output.contains("refused: the features read from " + file), output);
    assertTrue(output.contains(" rows × 8 values and their ids) needs "), output);
    assertTrue(output.contains("raise -Xmx"), output);
    assertFalse(output.contains("OutOfMemoryError"), output);
  }

  @Test
  void theConfiguredCapStopsTheRowsAsTheyGrow() throws IOException {
    Path file = features("rows.csv", 2000, 16);
    String before = System.getProperty(MemoryBudget.MAX_BYTES_PROPERTY);
    try {
      // room for 1,024 rows (188,416 bytes) fits; the growth to 2,048 rows (376,832) does not
      System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, "200k");
      MemoryBudgetExceededException e =
          assertThrows(
              MemoryBudgetExceededException.class,
              () ->
                  FeatureFiles.read(
                      file, null, ',', null, FeatureFiles.Expected.ANY, ProgressDisplay.off()));
      assertTrue(
          e.getMessage().contains("(room for 2048 rows × 16 values and their ids)"),
          e.getMessage());
      assertEquals(2048L * (4 * 16 + 120), e.bytesNeeded());
      assertEquals(204_800, e.budgetBytes());
      assertTrue(e.getMessage().contains("-Dheed.memory.maxBytes=204800"), e.getMessage());
      System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, "1m");
      FeatureFiles.Read read =
          FeatureFiles.read(
              file, null, ',', null, FeatureFiles.Expected.ANY, ProgressDisplay.off());
      assertEquals(2000, read.table().ids().size());
      float[] row = new float[16];
      read.table().rows().copyRow(1999, row, 0);
      assertEquals(((1999 + 15) % 10) + 0.5f, row[15]);
    } finally {
      if (before == null) {
        System.clearProperty(MemoryBudget.MAX_BYTES_PROPERTY);
      } else {
        System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, before);
      }
    }
  }

  /** This module's classes, its tests, and what the test JVM reads. */
  private static String classPath() throws URISyntaxException {
    List<String> parts = new ArrayList<>();
    for (Class<?> c : new Class<?>[] {FeaturesCsvHeapBudgetTest.class, FeatureFiles.class}) {
      parts.add(Path.of(c.getProtectionDomain().getCodeSource().getLocation().toURI()).toString());
    }
    parts.add(System.getProperty("java.class.path"));
    return String.join(File.pathSeparator, parts);
  }
}
