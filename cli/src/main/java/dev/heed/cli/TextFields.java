package dev.heed.cli;

import java.io.BufferedReader;
import java.io.FilterReader;
import java.io.IOException;
import java.io.Reader;
import java.io.UncheckedIOException;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.Locale;
import org.apache.commons.csv.CSVFormat;
import org.apache.commons.csv.CSVParser;
import org.apache.commons.csv.CSVRecord;

/**
 * Helpers for the delimited text files the CLI reads and writes: choosing a delimiter, reading
 * records with Apache Commons CSV (RFC 4180 quoting, {@code #} comments, blank lines passed over, a
 * UTF-8 byte order mark passed over, CRLF or LF line ends) and quoting CSV output fields.
 */
final class TextFields {

  private TextFields() {}

  /**
   * Parses a {@code --delimiter} value: {@code auto}, {@code ,} or {@code comma}, {@code tab} or
   * {@code \t}, {@code space}, or any other single ASCII character. Returns 0 for auto.
   */
  static char parseDelimiter(String value) {
    String v = value.toLowerCase(Locale.ROOT);
    return switch (v) {
      case "auto" -> 0;
      case ",", "comma" -> ',';
      case "tab", "\\t", "\t" -> '\t';
      case "space", " " -> ' ';
      case ";", "semicolon" -> ';';
      case "|" -> '|';
      default ->
          throw new CliException(
              "--delimiter must be auto, comma, tab, space, ';' or '|', got '" + value + "'",
              HeedCli.EXIT_USAGE);
    };
  }

  /**
   * Chooses the delimiter of a file: the given one, or for auto, tab for {@code .tsv}/{@code .tab}
   * files, comma for {@code .csv} files, otherwise the first of tab, comma, space found in the
   * first line that is neither blank nor a comment (comma if none).
   */
  static char delimiterOf(Path file, char given) throws IOException {
    if (given != 0) {
      return given;
    }
    String name = file.getFileName().toString().toLowerCase(Locale.ROOT);
    if (name.endsWith(".tsv") || name.endsWith(".tab")) {
      return '\t';
    }
    if (name.endsWith(".csv")) {
      return ',';
    }
    String first = firstDataLine(file);
    if (first == null) {
      return ',';
    }
    for (char c : new char[] {'\t', ',', ' '}) {
      if (first.trim().indexOf(c) >= 0) {
        return c;
      }
    }
    return ',';
  }

  /** Opens a file as strict UTF-8 text, passing over a byte order mark. */
  static BufferedReader open(Path file) throws IOException {
    BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8);
    in.mark(1);
    int first = in.read();
    if (first != BYTE_ORDER_MARK) {
      in.reset();
    }
    return in;
  }

  private static final int BYTE_ORDER_MARK = 0xFEFF;

  /** A record of a delimited file: its fields and the line it ends on. */
  record Row(List<String> fields, long line) {}

  /** Receives the records of a file one at a time. */
  interface RowHandler {
    void accept(Row row) throws IOException;
  }

  /**
   * Reads every record of a delimited file with Commons CSV: fields trimmed, a field in double
   * quotes may hold the delimiter, quotes ({@code ""}) and line breaks; lines starting with {@code
   * #} and blank lines are passed over; with the space delimiter, runs of spaces and tabs separate
   * fields. Errors become {@link CliException}s naming the file and line.
   */
  static void readRows(Path file, char delimiter, RowHandler handler) throws IOException {
    readRows(file, delimiter, ProgressDisplay.Bar.NONE, handler);
  }

  /** {@link #readRows(Path, char, RowHandler)}, moving {@code bar} by the characters read. */
  static void readRows(Path file, char delimiter, ProgressDisplay.Bar bar, RowHandler handler)
      throws IOException {
    long line = 0;
    try (BufferedReader in = open(file);
        CSVParser parser = format(delimiter).parse(new CountingReader(in, bar))) {
      Iterator<CSVRecord> records = parser.iterator();
      while (true) {
        CSVRecord record;
        try {
          if (!records.hasNext()) {
            break;
          }
          record = records.next();
        } catch (UncheckedIOException e) {
          throw unreadable(file, parser.getCurrentLineNumber(), e.getCause());
        }
        line = parser.getCurrentLineNumber();
        List<String> fields = new ArrayList<>(record.size());
        for (String field : record) {
          if (delimiter != ' ' || !field.isEmpty()) {
            fields.add(field);
          }
        }
        handler.accept(new Row(fields, Math.max(line, 1)));
      }
    } catch (CharacterCodingException e) {
      throw new CliException(
          file + ", line " + (line + 1) + ": not valid UTF-8 text", HeedCli.EXIT_USER_ERROR);
    }
  }

  private static CliException unreadable(Path file, long linesRead, IOException cause) {
    if (cause instanceof CharacterCodingException) {
      return new CliException(
          file + ", line " + (linesRead + 1) + ": not valid UTF-8 text", HeedCli.EXIT_USER_ERROR);
    }
    String message = cause == null ? "unreadable" : String.valueOf(cause.getMessage());
    // Commons CSV names the line itself; the message leads with it instead.
    message = message.replaceAll(" ?(at )?\\(?line:? \\d+\\)?,? ?(position: \\d+)?", "").strip();
    if (!message.isEmpty()) {
      message = Character.toLowerCase(message.charAt(0)) + message.substring(1);
    }
    return new CliException(
        file
            + ", line "
            + linesRead
            + ": "
            + message
            + " (a field in double quotes ends at the next lone quote; a quote inside one is"
            + " written \"\")",
        HeedCli.EXIT_USER_ERROR);
  }

  /** Tells a progress bar how many characters have been read (about one per byte). */
  private static final class CountingReader extends FilterReader {
    private static final long STEP = 1 << 22;
    private final ProgressDisplay.Bar bar;
    private long count;
    private long reported;

    CountingReader(Reader in, ProgressDisplay.Bar bar) {
      super(in);
      this.bar = bar;
    }

    @Override
    public int read(char[] buffer, int offset, int length) throws IOException {
      int n = super.read(buffer, offset, length);
      if (n > 0) {
        count += n;
        if (count - reported >= STEP) {
          reported = count;
          bar.stepTo(count);
        }
      }
      return n;
    }
  }

  /** The first record that is neither blank nor a comment, parsed as CSV, or null. */
  static List<String> firstRow(Path file, char delimiter) throws IOException {
    List<List<String>> first = new ArrayList<>();
    try {
      readRows(
          file,
          delimiter,
          row -> {
            first.add(row.fields());
            throw new FirstRowFound();
          });
    } catch (FirstRowFound done) {
      return first.get(0);
    } catch (CliException unreadable) {
      return null; // the real reader reports it
    }
    return null;
  }

  /** Ends {@link #firstRow} early. */
  private static final class FirstRowFound extends IOException {
    private static final long serialVersionUID = 1L;

    FirstRowFound() {
      super(null, null);
    }
  }

  private static CSVFormat format(char delimiter) {
    return CSVFormat.RFC4180
        .builder()
        .setDelimiter(delimiter)
        .setCommentMarker('#')
        .setIgnoreEmptyLines(true)
        .setIgnoreSurroundingSpaces(true)
        .setTrim(true)
        .get();
  }

  /** Returns the first line that is neither blank nor a {@code #} comment, or null. */
  static String firstDataLine(Path file) throws IOException {
    try (BufferedReader in = open(file)) {
      for (String line = in.readLine(); line != null; line = in.readLine()) {
        if (!isBlankOrComment(line)) {
          return line;
        }
      }
    } catch (java.nio.charset.MalformedInputException e) {
      return null; // the real reader reports the bad line
    }
    return null;
  }

  /** Whether a line carries no data: blank, or a comment starting with {@code #}. */
  static boolean isBlankOrComment(String line) {
    String t = line.strip();
    return t.isEmpty() || t.startsWith("#");
  }

  /** Splits a line at the delimiter (runs of spaces and tabs for {@code ' '}); fields trimmed. */
  static List<String> split(String line, char delimiter) {
    List<String> fields = new ArrayList<>();
    if (delimiter == ' ') {
      for (String f : line.strip().split("[ \t]+")) {
        fields.add(f);
      }
      return fields;
    }
    int start = 0;
    for (int i = 0; i <= line.length(); i++) {
      if (i == line.length() || line.charAt(i) == delimiter) {
        fields.add(line.substring(start, i).strip());
        start = i + 1;
      }
    }
    return fields;
  }

  /** Puts a field in double quotes, doubling the quotes inside (RFC 4180). */
  static String quoted(String field) {
    return '"' + field.replace("\"", "\"\"") + '"';
  }

  /** Quotes a CSV output field if it holds a comma, quote or line break (RFC 4180). */
  static String csv(String field) {
    for (int i = 0; i < field.length(); i++) {
      char c = field.charAt(i);
      if (c == ',' || c == '"' || c == '\n' || c == '\r') {
        return quoted(field);
      }
    }
    return field;
  }

  /** Describes a delimiter for messages. */
  static String describe(char delimiter) {
    return switch (delimiter) {
      case ',' -> "comma";
      case '\t' -> "tab";
      case ' ' -> "spaces";
      default -> "'" + delimiter + "'";
    };
  }
}
