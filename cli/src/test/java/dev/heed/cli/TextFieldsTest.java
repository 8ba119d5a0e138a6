package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Delimiter choice, field splitting and CSV quoting (RFC 4180) of the CLI's text files. */
class TextFieldsTest {

  @TempDir Path dir;

  @Test
  void splitsTrimsAndKeepsEmptyFields() {
    assertEquals(List.of("a", "b", ""), TextFields.split(" a , b ,", ','));
    assertEquals(List.of("a b", "c"), TextFields.split("a b\tc", '\t'));
    assertEquals(List.of("a", "b", "c"), TextFields.split("  a \t b   c ", ' '));
  }

  @Test
  void quotesOnlyWhenNeeded() {
    assertEquals("acct-1", TextFields.csv("acct-1"));
    assertEquals("\"a,b\"", TextFields.csv("a,b"));
    assertEquals("\"say \"\"hi\"\"\"", TextFields.csv("say \"hi\""));
  }

  @Test
  void delimiterFromOptionExtensionOrFirstDataLine() throws IOException {
    assertEquals('\t', TextFields.parseDelimiter("tab"));
    assertEquals(',', TextFields.parseDelimiter("comma"));
    assertEquals(0, TextFields.parseDelimiter("auto"));
    assertThrows(CliException.class, () -> TextFields.parseDelimiter("::"));
    Path tsv = Files.writeString(dir.resolve("e.tsv"), "a,b\n");
    assertEquals('\t', TextFields.delimiterOf(tsv, (char) 0), "extension wins");
    Path txt = Files.writeString(dir.resolve("e.txt"), "# comment, with comma\n\na\tb\n");
    assertEquals('\t', TextFields.delimiterOf(txt, (char) 0), "comments are passed over");
    Path spaces = Files.writeString(dir.resolve("e.edges"), "a b\n");
    assertEquals(' ', TextFields.delimiterOf(spaces, (char) 0));
    assertEquals(';', TextFields.delimiterOf(spaces, ';'), "an explicit delimiter wins");
  }

  @Test
  void readsQuotedFieldsCrlfAndByteOrderMarkWithLineNumbers() throws IOException {
    Path file =
        Files.writeString(
            dir.resolve("x.csv"),
            "\uFEFF\"id\" , \"f 1\"\r\n# comment\r\n\r\n\"Smith, Ann\",1.5\r\n\"two\nlines\",\"say \"\"hi\"\"\"\r\nlast,2");
    List<TextFields.Row> rows = new java.util.ArrayList<>();
    TextFields.readRows(file, ',', rows::add);
    assertEquals(4, rows.size());
    assertEquals(List.of("id", "f 1"), rows.get(0).fields());
    assertEquals(1, rows.get(0).line());
    assertEquals(List.of("Smith, Ann", "1.5"), rows.get(1).fields());
    assertEquals(4, rows.get(1).line());
    assertEquals(List.of("two\nlines", "say \"hi\""), rows.get(2).fields());
    assertEquals(List.of("last", "2"), rows.get(3).fields());
    assertEquals(7, rows.get(3).line());
    assertEquals(List.of("id", "f 1"), TextFields.firstRow(file, ','));
    Path spaces = Files.writeString(dir.resolve("s.txt"), "a   b\t c\n");
    List<TextFields.Row> spaced = new java.util.ArrayList<>();
    TextFields.readRows(spaces, ' ', spaced::add);
    assertEquals(List.of("a", "b", "c"), spaced.get(0).fields());
  }

  @Test
  void badQuotingAndBadUtf8NameFileAndLine() throws IOException {
    Path file = Files.writeString(dir.resolve("q.csv"), "a,1\n\"b\"x,2\n");
    CliException ex =
        assertThrows(CliException.class, () -> TextFields.readRows(file, ',', row -> {}));
    assertEquals(
        file
            + ", line 2: invalid character between encapsulated token and delimiter (a field in"
            + " double quotes ends at the next lone quote; a quote inside one is written \"\")",
        ex.getMessage());
    Path bad = Files.write(dir.resolve("b.csv"), new byte[] {'a', ',', (byte) 0xFF, '\n'});
    CliException utf8 =
        assertThrows(CliException.class, () -> TextFields.readRows(bad, ',', row -> {}));
    assertTrue(utf8.getMessage().contains("not valid UTF-8"), utf8.getMessage());
  }
}
