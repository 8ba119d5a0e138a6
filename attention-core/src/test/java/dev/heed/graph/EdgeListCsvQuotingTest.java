package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Edge lists as spreadsheets and databases write them (RFC 4180 quoting, headers, extra columns,
 * CRLF line ends, a UTF-8 byte order mark), and the hints a misread file gets.
 */
class EdgeListCsvQuotingTest {

  @TempDir Path dir;

  private Path write(String name, String content) throws IOException {
    return Files.write(dir.resolve(name), content.getBytes(StandardCharsets.UTF_8));
  }

  private static List<String> ids(EdgeListResult<String> read) {
    List<String> ids = new ArrayList<>();
    for (int i = 0; i < read.nodes().size(); i++) {
      ids.add(read.nodes().idOf(i));
    }
    return ids;
  }

  @Test
  void quotedIdsMayHoldTheDelimiterQuotesAndLineBreaks() throws IOException {
    Path file =
        write(
            "g.csv",
            "\"Smith, Ann\",\"Lee, Bo\"\n"
                + "\"Lee, Bo\" , \"say \"\"hi\"\"\"\n"
                + "\"two\nlines\",plain\n"
                + "plain,\"Smith, Ann\"\n");
    EdgeListResult<String> read =
        EdgeListFileBuilder.stringIds(file).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    assertEquals(List.of("Smith, Ann", "Lee, Bo", "say \"hi\"", "two\nlines", "plain"), ids(read));
    assertEquals(4, read.edgeLines());
    NodeIndex<String> n = read.nodes();
    assertTrue(read.graph().allows(n.indexOf("say \"hi\""), n.indexOf("Lee, Bo")));
    assertTrue(read.graph().allows(n.indexOf("Smith, Ann"), n.indexOf("plain")));
    // the record with a line break inside counts two lines: the next record is line 5
    Path bad = write("bad.csv", "a,b\n\"x\ny\",c\nd\n");
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class, () -> EdgeListFileBuilder.stringIds(bad).build());
    assertEquals(4, ex.lineNumber(), ex.getMessage());
  }

  @Test
  void quotedIntegerIdsAndQuotingFaults() throws IOException {
    Path file = write("g.csv", "\"1\",\"2\"\n2,3\n");
    assertEquals(3, EdgeListFileBuilder.integerIds(file).build().nodes().size());
    String[][] cases = {
      {"a,\"b\n", "has no closing quote"},
      {"\"a\"x,b\n", "text after the closing quote of field 1"},
      {"a,\"\"\n", "target id (field 2) is empty"},
    };
    for (String[] c : cases) {
      Path bad = write("bad.csv", c[0]);
      EdgeListFormatException ex =
          assertThrows(
              EdgeListFormatException.class,
              () -> EdgeListFileBuilder.stringIds(bad).build(),
              c[0]);
      assertTrue(ex.getMessage().contains(c[1]), ex.getMessage());
      assertEquals(1, ex.lineNumber());
    }
  }

  @Test
  void quotedHeaderIsPassedOverAndNamesColumns() throws IOException {
    Path file = write("g.csv", "\"source\",\"target\"\n\"a\",\"b\"\n");
    EdgeListResult<String> read = EdgeListFileBuilder.stringIds(file).header(true).build();
    assertEquals(List.of("a", "b"), ids(read));
    EdgeListResult<String> named =
        EdgeListFileBuilder.stringIds(file).sourceColumn("target").targetColumn("source").build();
    assertEquals(List.of("b", "a"), ids(named)); // the header is implied by naming columns
    assertTrue(named.graph().allows(named.nodes().indexOf("a"), named.nodes().indexOf("b")));
  }

  @Test
  void extraColumnsNeedNamedColumnsOrIgnoreExtraColumns() throws IOException {
    Path file =
        write(
            "payments.csv", "payment,amount,From,To\np1,10.5,alice,bob\np2,\"1,200\",bob,carol\n");
    EdgeListFormatException ex =
        assertThrows(
            EdgeListFormatException.class,
            () -> EdgeListFileBuilder.stringIds(file).header(true).build());
    assertEquals(EdgeListFormatException.Remedy.EXTRA_COLUMNS, ex.remedy());
    assertTrue(ex.getMessage().contains("found more (4)"), ex.getMessage());
    assertTrue(ex.getMessage().contains("ignoreExtraColumns"), ex.getMessage());

    EdgeListResult<String> byName =
        EdgeListFileBuilder.stringIds(file).sourceColumn("from").targetColumn("to").build();
    assertEquals(List.of("alice", "bob", "carol"), ids(byName));
    assertEquals(2, byName.edgeLines());
    EdgeListResult<String> byIndex =
        EdgeListFileBuilder.stringIds(file).header(true).sourceColumn(2).targetColumn(3).build();
    assertArrayEquals(byName.graph().columns(), byIndex.graph().columns());
    EdgeListResult<String> firstTwo =
        EdgeListFileBuilder.stringIds(file).header(true).ignoreExtraColumns(true).build();
    assertEquals(List.of("p1", "10.5", "p2", "1,200"), ids(firstTwo));

    EdgeListFormatException missing =
        assertThrows(
            EdgeListFormatException.class,
            () -> EdgeListFileBuilder.stringIds(file).sourceColumn("sender").build());
    assertTrue(missing.getMessage().contains("no column named 'sender'"), missing.getMessage());
    assertTrue(missing.getMessage().contains("[payment, amount, From, To]"), missing.getMessage());
    Path short3 = write("short.csv", "a,b,c,d\nx,y\n");
    EdgeListFormatException tooFew =
        assertThrows(
            EdgeListFormatException.class,
            () ->
                EdgeListFileBuilder.stringIds(short3).sourceColumn("c").targetColumn("d").build());
    assertTrue(tooFew.getMessage().contains("expected at least 4 fields"), tooFew.getMessage());
    assertEquals(2, tooFew.lineNumber());
  }

  @Test
  void crlfLineEndsAndByteOrderMark() throws IOException {
    byte[] bom = {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF};
    byte[] body = "source,target\r\n\"a\",b\r\nb,\"c, d\"\r\n".getBytes(StandardCharsets.UTF_8);
    byte[] all = new byte[bom.length + body.length];
    System.arraycopy(bom, 0, all, 0, bom.length);
    System.arraycopy(body, 0, all, bom.length, body.length);
    Path file = Files.write(dir.resolve("excel.csv"), all);
    EdgeListResult<String> read =
        EdgeListFileBuilder.stringIds(file).sourceColumn("source").targetColumn("target").build();
    assertEquals(List.of("a", "b", "c, d"), ids(read));
    // without the header setting the first id would carry no BOM either
    EdgeListResult<String> noHeader =
        EdgeListFileBuilder.stringIds(Files.write(dir.resolve("b.csv"), concat(bom, "x,y\r\n")))
            .build();
    assertEquals(List.of("x", "y"), ids(noHeader));
  }

  private static byte[] concat(byte[] a, String b) {
    byte[] tail = b.getBytes(StandardCharsets.UTF_8);
    byte[] all = new byte[a.length + tail.length];
    System.arraycopy(a, 0, all, 0, a.length);
    System.arraycopy(tail, 0, all, a.length, tail.length);
    return all;
  }

  @Test
  void faultsNameTheSettingThatFixesThem() throws IOException {
    Path semicolons = write("g.csv", "a;b\nb;c\n");
    EdgeListFormatException delimiter =
        assertThrows(
            EdgeListFormatException.class, () -> EdgeListFileBuilder.stringIds(semicolons).build());
    assertEquals(EdgeListFormatException.Remedy.DELIMITER, delimiter.remedy());
    assertEquals(";", delimiter.remedyValue());
    assertTrue(delimiter.getMessage().contains("delimiter(';')"), delimiter.getMessage());

    Path tabs = write("g.txt", "a\tb\n");
    assertEquals(
        "\\t",
        assertThrows(
                EdgeListFormatException.class, () -> EdgeListFileBuilder.stringIds(tabs).build())
            .remedyValue());

    Path header = write("h.csv", "from_account,to_account\n1,2\n");
    EdgeListFormatException headerFault =
        assertThrows(
            EdgeListFormatException.class, () -> EdgeListFileBuilder.integerIds(header).build());
    assertEquals(EdgeListFormatException.Remedy.HEADER, headerFault.remedy());
    assertTrue(headerFault.getMessage().contains("header(true)"), headerFault.getMessage());
    // a bad id further down is not taken for a header
    Path later = write("l.csv", "1,2\nx,3\n");
    assertEquals(
        EdgeListFormatException.Remedy.NONE,
        assertThrows(
                EdgeListFormatException.class, () -> EdgeListFileBuilder.integerIds(later).build())
            .remedy());
    assertThrows(
        IllegalArgumentException.class,
        () -> EdgeListFileBuilder.stringIds(later).sourceColumn(1).targetColumn(1).build());
    assertThrows(
        IllegalArgumentException.class,
        () -> EdgeListFileBuilder.stringIds(later).sourceColumn(-1));
  }

  @Test
  void progressReportsBothPassesToTheEnd() throws IOException {
    StringBuilder text = new StringBuilder();
    for (int k = 0; k < 1000; k++) {
      text.append(k).append(',').append(k + 1).append('\n');
    }
    Path file = write("g.csv", text.toString());
    long size = Files.size(file);
    List<long[]> calls = new ArrayList<>();
    EdgeListFileBuilder.integerIds(file)
        .progress((pass, passes, read, total) -> calls.add(new long[] {pass, passes, read, total}))
        .build();
    assertEquals(2, calls.size());
    assertArrayEquals(new long[] {1, 2, size, size}, calls.get(0));
    assertArrayEquals(new long[] {2, 2, size, size}, calls.get(1));
  }
}
