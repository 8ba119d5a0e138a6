package dev.heed.cli;

import java.io.BufferedReader;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Small helpers for the delimited text files the CLI reads and writes: choosing a delimiter,
 * splitting a line (no quoting: a field is taken as it stands, as in edge-list files) and quoting
 * CSV output fields (RFC 4180).
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

  /** Returns the first line that is neither blank nor a {@code #} comment, or null. */
  static String firstDataLine(Path file) throws IOException {
    try (BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
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

  /** Quotes a CSV output field if it holds a comma, quote or line break (RFC 4180). */
  static String csv(String field) {
    for (int i = 0; i < field.length(); i++) {
      char c = field.charAt(i);
      if (c == ',' || c == '"' || c == '\n' || c == '\r') {
        return '"' + field.replace("\"", "\"\"") + '"';
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
