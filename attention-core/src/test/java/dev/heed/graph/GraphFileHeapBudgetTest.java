package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.MemoryBudget;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.classify.NodeFeatures;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import java.io.BufferedWriter;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.concurrent.TimeUnit;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Input-driven allocations are checked against {@link MemoryBudget} before they are made: a graph
 * file too large for the heap given fails with {@link MemoryBudgetExceededException} (bytes needed,
 * limit, remedy), not with an {@link OutOfMemoryError}, in a child JVM with a 16 MiB heap; and the
 * optional cap {@value MemoryBudget#MAX_BYTES_PROPERTY} stops graph building, id maps, tensors and
 * feature matrices the same way.
 */
class GraphFileHeapBudgetTest {

  @TempDir Path dir;

  /** Runs in the child JVM: builds the graph of args[0] and prints what happened. */
  public static void main(String[] args) throws IOException {
    try {
      CsrGraph graph =
          EdgeListFileBuilder.indexIds(Path.of(args[0]))
              .direction(DirectionPolicy.SYMMETRISE)
              .build()
              .graph();
      System.out.println("built " + graph.entryCount() + " entries");
    } catch (MemoryBudgetExceededException e) {
      System.out.println("refused: " + e.getMessage());
    } catch (OutOfMemoryError e) {
      System.out.println("OutOfMemoryError");
      System.exit(3);
    }
  }

  @Test
  void aGraphFileTooLargeForTheHeapIsRefusedWithTheBytesAndTheRemedy() throws Exception {
    // 3M edges symmetrised plus 100,000 self-loops: 6.1M entries, 24 MB of columns, more than a 16
    // MiB heap holds
    Path edges = dir.resolve("large.csv");
    int edgeCount = 3_000_000;
    try (BufferedWriter w = Files.newBufferedWriter(edges, StandardCharsets.US_ASCII)) {
      StringBuilder line = new StringBuilder();
      for (int k = 0; k < edgeCount; k++) {
        line.setLength(0);
        line.append(k % 100_000).append(',').append((k * 7 + 1) % 100_000).append('\n');
        w.append(line);
      }
    }
    List<String> command =
        ChildJvm.command(GraphFileHeapBudgetTest.class, List.of("-Xmx16m"), edges.toString());
    Process child = new ProcessBuilder(command).redirectErrorStream(true).start();
    String output = new String(child.getInputStream().readAllBytes(), StandardCharsets.UTF_8);
    assertTrue(child.waitFor(120, TimeUnit.SECONDS), "child JVM did not finish");
    assertEquals(0, child.exitValue(), output);
    assertTrue(output.contains("refused: the graph's column array (6100000 entries)"), output);
    assertTrue(output.contains("needs 24400016 bytes"), output);
    assertTrue(output.contains("raise -Xmx"), output);
    assertFalse(output.contains("OutOfMemoryError"), output);
  }

  @Test
  void aHugeIndexIdIsRefusedBeforeItsRowCountsAreAllocated() throws IOException {
    // index ids are used as they are: id 2,147,483,000 asks for 8 GiB of row counts
    Path edges = Files.writeString(dir.resolve("huge-id.csv"), "0,2147483000\n");
    MemoryBudgetExceededException e =
        assertThrows(
            MemoryBudgetExceededException.class, () -> EdgeListFileBuilder.indexIds(edges).build());
    assertTrue(
        e.getMessage().contains("the graph's row counts (2147483002 nodes)"), e.getMessage());
  }

  @Test
  void theConfiguredCapStopsEveryInputSizedAllocation() throws IOException {
    Path edges = Files.writeString(dir.resolve("g.csv"), "a,b\nb,c\nc,a\n");
    Path npy = dir.resolve("x.npy");
    Npy.write(NpyArray.ofFloats(new float[4096], 64, 64), npy);
    String before = System.getProperty(MemoryBudget.MAX_BYTES_PROPERTY);
    try {
      System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, "1k");
      assertEquals(1024, MemoryBudget.limitBytes());
      // 300 nodes: row counts of 1,204 bytes
      MemoryBudgetExceededException graph =
          assertThrows(
              MemoryBudgetExceededException.class,
              () -> CsrGraphBuilder.fromEdges(new int[] {0}, new int[] {299}, 300).build());
      assertTrue(
          graph.getMessage().contains("the graph's row counts (301 nodes)"), graph.getMessage());
      assertTrue(graph.getMessage().contains("-Dheed.memory.maxBytes=1024"), graph.getMessage());
      assertEquals(1024, graph.budgetBytes());
      MemoryBudgetExceededException tensor =
          assertThrows(MemoryBudgetExceededException.class, () -> Npy.read(npy));
      assertTrue(tensor.getMessage().contains("array of shape [64, 64]"), tensor.getMessage());
      assertEquals(2 * 64 * 64 * 4, tensor.bytesNeeded());
      MemoryBudgetExceededException features =
          assertThrows(
              MemoryBudgetExceededException.class,
              () -> NodeFeatures.of(new float[][] {new float[300]}));
      assertTrue(features.getMessage().contains("node features (1 × 300)"), features.getMessage());
      // small inputs still pass
      assertEquals(3, EdgeListFileBuilder.stringIds(edges).build().graph().nodeCount());
      System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, "lots");
      assertThrows(IllegalArgumentException.class, MemoryBudget::limitBytes);
    } finally {
      if (before == null) {
        System.clearProperty(MemoryBudget.MAX_BYTES_PROPERTY);
      } else {
        System.setProperty(MemoryBudget.MAX_BYTES_PROPERTY, before);
      }
    }
  }
}
