package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.BufferedWriter;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class EdgeListFileBuilderTest {

  @TempDir Path dir;

  private Path write(String name, String content) throws IOException {
    Path p = dir.resolve(name);
    Files.write(p, content.getBytes(StandardCharsets.UTF_8));
    return p;
  }

  @Test
  void javadocExampleStringIdsCsvWithComment() throws IOException {
    Path file = write("users.csv", "# follower,followee\nalice,bob\ncarol,bob\n");
    EdgeListResult<String> read =
        EdgeListFileBuilder.stringIds(file).delimiter(',').selfLoops(SelfLoopPolicy.ADD).build();
    NodeIndex<String> nodes = read.nodes();
    assertEquals(3, nodes.size());
    assertEquals(
        List.of("alice", "bob", "carol"), List.of(nodes.idOf(0), nodes.idOf(1), nodes.idOf(2)));
    int bob = nodes.requireIndexOf("bob");
    assertEquals(3, read.graph().degree(bob)); // alice, carol and himself
    assertEquals(2, read.edgeLines());
    assertEquals(SkippedLines.NONE, read.skipped());
  }

  @Test
  void tsvWithHeaderCrlfBlankLinesAndNoFinalNewline() throws IOException {
    Path file = write("g.tsv", "src\tdst\r\n\r\n 10 \t 20\r\n# note\r\n20\t30\r\n30\t10");
    EdgeListResult<Long> read =
        EdgeListFileBuilder.integerIds(file)
            .delimiter('\t')
            .header(true)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    LongNodeIndex nodes = (LongNodeIndex) read.nodes();
    assertEquals(3, nodes.size());
    assertEquals(10L, nodes.idAt(0));
    assertEquals(1, nodes.indexOfId(20));
    assertEquals(-1, nodes.indexOfId(40));
    assertEquals(3, read.edgeLines());
    // 10 -> 20, 20 -> 30, 30 -> 10: node 20 (index 1) attends to 10 (index 0)
    assertArrayEquals(new int[] {0, 1, 2, 3}, read.graph().rowOffsets());
    assertArrayEquals(new int[] {2, 0, 1}, read.graph().columns());
  }

  @Test
  void whitespaceDelimiterAcceptsRunsOfSpacesAndTabs() throws IOException {
    Path file = write("g.txt", "0   1\n1\t \t2\n");
    CsrGraph g =
        EdgeListFileBuilder.indexIds(file)
            .delimiter(' ')
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build()
            .graph();
    assertArrayEquals(new int[] {0, 0, 1, 2}, g.rowOffsets());
  }

  @Test
  void indexIdsUsedAsTheyAreWithOptionalNodeCount() throws IOException {
    Path file = write("g.csv", "3,1\n1,3\n");
    EdgeListResult<Long> plain =
        EdgeListFileBuilder.indexIds(file).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    assertEquals(4, plain.graph().nodeCount()); // largest id plus one
    assertTrue(((LongNodeIndex) plain.nodes()).isIdentity());
    assertEquals(3, plain.nodes().indexOf(3L));
    assertTrue(plain.graph().allows(1, 3));
    EdgeListResult<Long> wide = EdgeListFileBuilder.indexIds(file).nodeCount(10).build();
    assertEquals(10, wide.graph().nodeCount());
    assertEquals(10 + 2, wide.graph().edgeCount());
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class,
            () -> EdgeListFileBuilder.indexIds(file).nodeCount(3).build());
    assertEquals(1, ex.lineNumber());
    assertTrue(ex.getMessage().contains("source id 3 is not a node index"), ex.getMessage());
    assertTrue(ex.getMessage().contains("nodeCount = 3"), ex.getMessage());
    assertThrows(
        IllegalStateException.class, () -> EdgeListFileBuilder.integerIds(file).nodeCount(3));
  }

  @Test
  void integerIdsMappedInOrderOfFirstAppearanceIncludingNegativeAndHuge() throws IOException {
    Path file = write("g.csv", "9223372036854775807,-5\n-5,+7\n");
    EdgeListResult<Long> read =
        EdgeListFileBuilder.integerIds(file).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    assertEquals(Long.MAX_VALUE, read.nodes().idOf(0));
    assertEquals(-5L, read.nodes().idOf(1));
    assertEquals(7L, read.nodes().idOf(2));
    assertTrue(read.graph().allows(1, 0));
    assertTrue(read.graph().allows(2, 1));
  }

  @Test
  void utf8IdsDecodedAndInvalidUtf8Rejected() throws IOException {
    Path file = write("g.csv", "Zoë,Łukasz\n");
    EdgeListResult<String> read = EdgeListFileBuilder.stringIds(file).build();
    assertEquals(0, read.nodes().requireIndexOf("Zoë"));
    assertEquals(1, read.nodes().requireIndexOf("Łukasz"));
    Path bad = dir.resolve("bad.csv");
    Files.write(bad, new byte[] {'a', ',', (byte) 0xC3, (byte) 0x28, '\n'});
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class, () -> EdgeListFileBuilder.stringIds(bad).build());
    assertTrue(ex.reason().contains("not valid UTF-8"), ex.getMessage());
    assertEquals(bad, ex.file());
  }

  /** Every kind of malformed line fails with file, line number and the fault. */
  @Test
  void malformedLinesNameFileLineAndFault() throws IOException {
    String[][] cases = {
      {"0,1\n2\n", "2", "found one"},
      {"0,1\n# c\n1,2,0.5\n", "3", "found more"},
      {",1\n", "1", "source id (field 1) is empty"},
      {"1, \n", "1", "target id (field 2) is empty"},
      {"a,1\n", "1", "source id is not an integer"},
      {"1,2x\n", "1", "target id is not an integer"},
      {"1,99999999999999999999\n", "1", "does not fit in a 64-bit integer"},
      {"1,-\n", "1", "not an integer"},
    };
    for (String[] c : cases) {
      Path file = write("bad.csv", c[0]);
      EdgeListFormatException ex =
          assertThrows(
              EdgeListFormatException.class,
              () -> EdgeListFileBuilder.integerIds(file).build(),
              c[0]);
      assertEquals(Long.parseLong(c[1]), ex.lineNumber(), c[0]);
      assertTrue(ex.getMessage().contains(c[2]), ex.getMessage());
      assertTrue(ex.getMessage().contains("bad.csv, line " + c[1]), ex.getMessage());
    }
    Path negative = write("neg.csv", "0,-1\n");
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class, () -> EdgeListFileBuilder.indexIds(negative).build());
    assertTrue(ex.getMessage().contains("target id -1 is not a node index"), ex.getMessage());
  }

  @Test
  void lenientModeSkipsAndReportsMalformedLines() throws IOException {
    StringBuilder text = new StringBuilder("0,1\n");
    for (int k = 0; k < 12; k++) {
      text.append("x").append(k).append(",1\n"); // lines 2..13
    }
    text.append("1,2\n1;2\n");
    Path file = write("g.csv", text.toString());
    EdgeListResult<Long> read =
        EdgeListFileBuilder.integerIds(file)
            .lenient(true)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .build();
    assertEquals(2, read.edgeLines());
    assertEquals(2, read.graph().edgeCount());
    assertEquals(13, read.skipped().count());
    assertEquals(SkippedLines.MAX_REPORTED, read.skipped().first().size());
    assertEquals(2, read.skipped().first().get(0).lineNumber());
    assertTrue(read.skipped().first().get(0).reason().contains("'x0,1'"));
    assertEquals(11, read.skipped().first().get(9).lineNumber());
  }

  @Test
  void duplicateRejectionNamesIdsAndBothLines() throws IOException {
    Path file = write("g.csv", "a,b\nb,c\n# again\na,b\n");
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> EdgeListFileBuilder.stringIds(file).duplicates(DuplicatePolicy.REJECT).build());
    assertTrue(ex.getMessage().contains("edge 'a' -> 'b'"), ex.getMessage());
    assertTrue(ex.getMessage().contains("line 1 of"), ex.getMessage());
    assertTrue(ex.getMessage().contains("line 4 of"), ex.getMessage());
    // merged: a -> b once, b -> c, plus three self-loops
    assertEquals(2 + 3, EdgeListFileBuilder.stringIds(file).build().graph().edgeCount());
  }

  @Test
  void lineLongerThanTheReadBufferIsRead() throws IOException {
    String longId = "n".repeat(200_000);
    Path file = write("g.csv", "a," + longId + "\n" + longId + ",b\n");
    EdgeListResult<String> read = EdgeListFileBuilder.stringIds(file).build();
    assertEquals(3, read.nodes().size());
    assertTrue(read.graph().allows(read.nodes().indexOf("b"), read.nodes().indexOf(longId)));
  }

  @Test
  void missingFileAndBadSettings() {
    assertThrows(
        java.nio.file.NoSuchFileException.class,
        () -> EdgeListFileBuilder.stringIds(dir.resolve("none.csv")).build());
    assertThrows(
        IllegalArgumentException.class,
        () -> EdgeListFileBuilder.stringIds(dir.resolve("x")).delimiter('\n'));
    assertThrows(NullPointerException.class, () -> EdgeListFileBuilder.stringIds(null));
  }

  /**
   * A file of 100k random edges gives exactly the graph the array builder gives, for every policy.
   */
  @Test
  void largeFileMatchesArrayBuilderForEveryPolicy() throws IOException {
    long seed = 4242;
    SplittableRandom random = new SplittableRandom(seed);
    int n = 20_000;
    int e = 100_000;
    int[] s = new int[e];
    int[] t = new int[e];
    Path file = dir.resolve("big.tsv");
    try (BufferedWriter w = Files.newBufferedWriter(file)) {
      w.write("source\ttarget\n");
      for (int k = 0; k < e; k++) {
        s[k] = random.nextInt(n);
        t[k] = random.nextInt(n);
        w.write(s[k] + "\t" + t[k] + "\n");
      }
    }
    for (SelfLoopPolicy loops : SelfLoopPolicy.values()) {
      for (DirectionPolicy direction : DirectionPolicy.values()) {
        String where = "seed " + seed + ", " + loops + ", " + direction;
        EdgeListResult<Long> indexRead =
            EdgeListFileBuilder.indexIds(file)
                .delimiter('\t')
                .header(true)
                .nodeCount(n)
                .selfLoops(loops)
                .direction(direction)
                .build();
        CsrGraph expected =
            CsrGraphBuilder.fromEdges(s, t, n).selfLoops(loops).direction(direction).build();
        assertEquals(expected, indexRead.graph(), where);
        // mapped ids: the same graph up to the renumbering held in the index
        EdgeListResult<Long> mapped =
            EdgeListFileBuilder.integerIds(file)
                .delimiter('\t')
                .header(true)
                .selfLoops(loops)
                .direction(direction)
                .build();
        LongNodeIndex ids = (LongNodeIndex) mapped.nodes();
        CsrGraph m = mapped.graph();
        long entries = 0;
        for (int i = 0; i < m.nodeCount(); i++) {
          int original = (int) ids.idAt(i);
          for (int x = m.rowStart(i); x < m.rowEnd(i); x++) {
            assertTrue(expected.allows(original, (int) ids.idAt(m.column(x))), where);
            entries++;
          }
        }
        long expectedEntries = 0;
        for (int i = 0; i < n; i++) {
          if (ids.indexOfId(i) >= 0) {
            expectedEntries += expected.degree(i);
          }
        }
        assertEquals(expectedEntries, entries, where);
      }
    }
  }

  @Test
  void commentPrefixCanBeChangedOrDisabled() throws IOException {
    Path file = write("g.csv", "% note\n#a,b\n");
    EdgeListResult<String> read = EdgeListFileBuilder.stringIds(file).commentPrefix("%").build();
    assertEquals(0, read.nodes().requireIndexOf("#a")); // '#' is an ordinary character now
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class,
            () -> EdgeListFileBuilder.stringIds(file).commentPrefix(null).build());
    assertEquals(1, ex.lineNumber()); // "% note" is data now, with one field
    IllegalArgumentException clash =
        assertThrows(
            IllegalArgumentException.class,
            () -> EdgeListFileBuilder.stringIds(file).commentPrefix(",").build());
    assertTrue(clash.getMessage().contains("starts with the delimiter"), clash.getMessage());
  }
}
