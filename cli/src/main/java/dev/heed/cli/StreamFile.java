package dev.heed.cli;

import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Reads a stream file: timestamped changes to a graph, one per record, in the format of {@code
 * docs/stream-format.md}. CSV as RFC 4180 (fields in double quotes may hold commas, quotes written
 * {@code ""} and line breaks), UTF-8, a byte order mark and CRLF line ends allowed, blank lines and
 * lines starting with {@code #} passed over. The first record is the header:
 *
 * <pre>
 *   time,kind,source,target[,FEATURE_1,...,FEATURE_F]
 * </pre>
 *
 * with the feature columns named as the model's features, in its order (any names when the model
 * records none), or left out when no event carries features. Each later record is one event:
 *
 * <ul>
 *   <li>{@code time}: a decimal number of seconds (any origin, for example Unix time), never
 *       earlier than the previous event's: the events are replayed in file order, and a file out of
 *       time order is refused rather than silently reordered;
 *   <li>{@code kind}: {@code add-edge} or {@code remove-edge} ({@code source -> target}: target
 *       attends to source; the graph's policies apply, so under symmetrisation the tie both ways),
 *       {@code add-node} (a new node {@code source} with its features; {@code target} empty) or
 *       {@code set-features} (new features for node {@code source}; {@code target} empty);
 *   <li>feature fields: finite numbers on {@code add-node} and {@code set-features} lines, empty on
 *       edge lines.
 * </ul>
 *
 * Whether ids exist and removed edges are present depends on the graph, so the replay checks that
 * (naming the line) and this reader does not. Everything is read into memory first, so a malformed
 * line stops the command before any change is applied. Cost: O(file size).
 */
final class StreamFile {

  /** The fixed columns, in order. */
  static final List<String> FIXED_COLUMNS = List.of("time", "kind", "source", "target");

  /** What an event does. */
  enum Kind {
    ADD_EDGE("add-edge"),
    REMOVE_EDGE("remove-edge"),
    ADD_NODE("add-node"),
    SET_FEATURES("set-features");

    private final String word;

    Kind(String word) {
      this.word = word;
    }

    /** The kind as the file writes it. */
    String word() {
      return word;
    }

    boolean isEdge() {
      return this == ADD_EDGE || this == REMOVE_EDGE;
    }

    static Kind of(String word) {
      for (Kind k : values()) {
        if (k.word.equals(word)) {
          return k;
        }
      }
      return null;
    }

    static String choices() {
      return "add-edge, remove-edge, add-node or set-features";
    }
  }

  /**
   * One event of the file.
   *
   * @param line the line the record ends on, for messages
   * @param time seconds
   * @param kind what it does
   * @param source the edge's source, or the node
   * @param target the edge's target; empty for node events
   * @param features the node's features for node events; empty for edge events
   */
  record Event(long line, double time, Kind kind, String source, String target, float[] features) {

    /** The event as a reader would name it: {@code remove-edge a -> b}, {@code add-node c}. */
    String describe() {
      return kind.word() + " " + (kind.isEdge() ? source + " -> " + target : source);
    }
  }

  private StreamFile() {}

  /**
   * Reads and checks every event.
   *
   * @param file the stream file
   * @param featureNames the model's feature names (empty when it records none)
   * @param featureCount the model's feature count
   * @return the events in file order
   * @throws CliException (user error) naming the file, the line and how to fix it
   * @throws IOException if the file cannot be read
   */
  static List<Event> read(Path file, List<String> featureNames, int featureCount)
      throws IOException {
    ClassifyRun.requireFile(file, "--stream");
    List<Event> events = new ArrayList<>();
    int[] width = {-1};
    double[] lastTime = {Double.NEGATIVE_INFINITY};
    long[] lastLine = {0};
    TextFields.readRows(
        file,
        ',',
        row -> {
          if (width[0] < 0) {
            width[0] = checkHeader(file, row, featureNames, featureCount);
            return;
          }
          Event e = parse(file, row, width[0]);
          if (e.time() < lastTime[0]) {
            throw error(
                file,
                row.line(),
                "time "
                    + row.fields().get(0)
                    + " is earlier than the previous event's ("
                    + decimal(lastTime[0])
                    + ", line "
                    + lastLine[0]
                    + "); events must be in time order: sort the file by its time column,"
                    + " keeping the header first (sort is stable for equal times)");
          }
          lastTime[0] = e.time();
          lastLine[0] = row.line();
          events.add(e);
        });
    if (width[0] < 0) {
      throw new CliException(
          file + ": no header line; the first line must be " + String.join(",", FIXED_COLUMNS),
          HeedCli.EXIT_USER_ERROR);
    }
    return events;
  }

  /** Checks the header and returns the number of fields every record must have. */
  private static int checkHeader(
      Path file, TextFields.Row row, List<String> featureNames, int featureCount) {
    List<String> fields = row.fields();
    int fixed = FIXED_COLUMNS.size();
    List<String> head = fields.subList(0, Math.min(fixed, fields.size()));
    List<String> lower = head.stream().map(s -> s.toLowerCase(Locale.ROOT)).toList();
    if (!lower.equals(FIXED_COLUMNS)) {
      throw error(
          file,
          row.line(),
          "the header must start with "
              + String.join(",", FIXED_COLUMNS)
              + ", got "
              + String.join(",", head)
              + " (the first line is the header; see docs/stream-format.md)");
    }
    List<String> names = fields.subList(fixed, fields.size());
    if (names.isEmpty()) {
      return fixed;
    }
    if (names.size() != featureCount) {
      throw error(
          file,
          row.line(),
          "the header has "
              + names.size()
              + " feature columns, but the model reads "
              + featureCount
              + " features per node"
              + (featureNames.isEmpty() ? "" : " " + featureNames)
              + "; name them after "
              + String.join(",", FIXED_COLUMNS)
              + ", or leave them out when no event carries features");
    }
    if (!featureNames.isEmpty() && !names.equals(featureNames)) {
      throw error(
          file,
          row.line(),
          "the feature columns "
              + names
              + " differ from the model's feature names "
              + featureNames
              + "; name them as the model does, in its order");
    }
    return fields.size();
  }

  private static Event parse(Path file, TextFields.Row row, int width) {
    List<String> f = row.fields();
    long line = row.line();
    if (f.size() != width) {
      throw error(
          file,
          line,
          "expected "
              + width
              + " fields as the header has, got "
              + f.size()
              + (f.size() > width
                  ? " (an id holding a comma must be in double quotes)"
                  : " (edge lines leave the feature fields empty, but keep their commas)"));
    }
    double time = parseTime(file, line, f.get(0));
    Kind kind = Kind.of(f.get(1).toLowerCase(Locale.ROOT));
    if (kind == null) {
      throw error(file, line, "unknown kind '" + f.get(1) + "'; expected " + Kind.choices());
    }
    String source = f.get(2);
    String target = f.get(3);
    if (source.isEmpty()) {
      throw error(
          file,
          line,
          kind.word()
              + " needs "
              + (kind.isEdge() ? "the edge's source" : "the node's id")
              + " in the source column");
    }
    List<String> values = f.subList(FIXED_COLUMNS.size(), f.size());
    if (kind.isEdge()) {
      if (target.isEmpty()) {
        throw error(file, line, kind.word() + " needs the edge's target in the target column");
      }
      for (String v : values) {
        if (!v.isEmpty()) {
          throw error(
              file,
              line,
              kind.word()
                  + " carries no features; leave the feature fields empty (features go on"
                  + " add-node and set-features lines)");
        }
      }
      return new Event(line, time, kind, source, target, new float[0]);
    }
    if (!target.isEmpty()) {
      throw error(
          file,
          line,
          kind.word()
              + " names one node, in the source column; leave target empty (got '"
              + target
              + "')");
    }
    if (values.isEmpty()) {
      throw error(
          file,
          line,
          kind.word()
              + " needs the node's features, but the header has no feature columns; add the"
              + " model's feature names after "
              + String.join(",", FIXED_COLUMNS));
    }
    float[] x = new float[values.size()];
    for (int c = 0; c < x.length; c++) {
      String v = values.get(c);
      float value;
      try {
        value = Float.parseFloat(v);
      } catch (NumberFormatException e) {
        value = Float.NaN;
      }
      if (!Float.isFinite(value)) {
        throw error(
            file,
            line,
            "feature "
                + (c + 1)
                + " of node '"
                + source
                + "' is '"
                + v
                + "', not a finite number ("
                + kind.word()
                + " needs every feature)");
      }
      x[c] = value;
    }
    return new Event(line, time, kind, source, "", x);
  }

  private static double parseTime(Path file, long line, String text) {
    double t;
    try {
      t = Double.parseDouble(text);
    } catch (NumberFormatException e) {
      t = Double.NaN;
    }
    if (!Double.isFinite(t) || text.isEmpty() || !text.matches("[-+0-9.eE]+")) {
      throw error(
          file,
          line,
          "time '" + text + "' is not a number of seconds (write a decimal such as 61.5)");
    }
    return t;
  }

  /** A time as a plain decimal, as short as it reads back exactly. */
  static String decimal(double time) {
    return java.math.BigDecimal.valueOf(time).stripTrailingZeros().toPlainString();
  }

  static CliException error(Path file, long line, String message) {
    return new CliException(file + ", line " + line + ": " + message, HeedCli.EXIT_USER_ERROR);
  }
}
