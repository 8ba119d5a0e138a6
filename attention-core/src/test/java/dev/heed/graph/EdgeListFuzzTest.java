package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.code_intelligence.jazzer.api.FuzzedDataProvider;
import com.code_intelligence.jazzer.junit.FuzzTest;
import dev.heed.attention.MemoryBudgetExceededException;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.file.Files;
import java.nio.file.Path;

/**
 * Fuzz target for the edge-list reader (Jazzer): the options come from the input's last bytes, the
 * file from the rest. Allowed outcomes: a validated graph whose entries fit the lines read, {@link
 * EdgeListFormatException} with a message, {@link MemoryBudgetExceededException} (a huge index id
 * asks for huge row counts), or (under {@link DuplicatePolicy#REJECT} only) {@link
 * IllegalArgumentException} naming the repeated edge. Anything else is a finding. Seeds and saved
 * findings: {@code EdgeListFuzzTestInputs/readEdgeList/} in the test resources.
 */
class EdgeListFuzzTest {

  private static final Path FILE = tempFile();

  private static Path tempFile() {
    try {
      Path file = Files.createTempFile("heed-edge-fuzz", ".csv");
      file.toFile().deleteOnExit();
      return file;
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  private static final char[] DELIMITERS = {',', '\t', ' ', ';', '|'};

  @FuzzTest(maxDuration = "60s")
  void readEdgeList(FuzzedDataProvider data) throws IOException {
    int kind = data.consumeInt(0, 2);
    boolean header = data.consumeBoolean();
    boolean lenient = data.consumeBoolean();
    boolean ignoreExtra = data.consumeBoolean();
    char delimiter = data.pickValue(DELIMITERS);
    SelfLoopPolicy selfLoops = data.pickValue(SelfLoopPolicy.values());
    DirectionPolicy direction = data.pickValue(DirectionPolicy.values());
    DuplicatePolicy duplicates = data.pickValue(DuplicatePolicy.values());
    byte[] text = data.consumeRemainingAsBytes();
    Files.write(FILE, text);
    EdgeListFileBuilder<?> builder =
        switch (kind) {
          case 0 -> EdgeListFileBuilder.stringIds(FILE);
          case 1 -> EdgeListFileBuilder.integerIds(FILE);
          default -> EdgeListFileBuilder.indexIds(FILE);
        };
    builder
        .header(header)
        .lenient(lenient)
        .ignoreExtraColumns(ignoreExtra)
        .delimiter(delimiter)
        .selfLoops(selfLoops)
        .direction(direction)
        .duplicates(duplicates);
    EdgeListResult<?> result;
    try {
      result = builder.build();
    } catch (EdgeListFormatException e) {
      assertFalse(e.getMessage().isBlank(), "an error without a message");
      return;
    } catch (MemoryBudgetExceededException e) {
      // index ids up to 2^31 - 1 ask for row counts of up to 8 GiB
      assertTrue(e.getMessage().contains("raise -Xmx"), e.getMessage());
      return;
    } catch (IllegalArgumentException e) {
      if (duplicates != DuplicatePolicy.REJECT) {
        throw e;
      }
      assertTrue(e.getMessage().contains("line"), e.getMessage());
      return;
    }
    CsrGraph graph = result.graph();
    assertEquals(graph.nodeCount(), result.nodes().size());
    long lines = 1;
    for (byte b : text) {
      if (b == '\n' || b == '\r') {
        lines++;
      }
    }
    // at most two entries per line (symmetrised) plus one self-loop per node
    assertTrue(
        graph.entryCount() <= 2 * lines + graph.nodeCount(),
        graph.entryCount() + " entries from " + lines + " lines");
  }
}
