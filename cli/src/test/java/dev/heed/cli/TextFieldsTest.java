package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

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
}
