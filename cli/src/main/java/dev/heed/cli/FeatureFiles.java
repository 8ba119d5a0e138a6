package dev.heed.cli;

import dev.heed.attention.MemoryBudget;
import dev.heed.classify.FeatureTable;
import dev.heed.classify.NodeFeatures;
import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

/**
 * Reads node features for {@code heed classify} and {@code heed train}, matched to the graph's
 * nodes by id (never by position alone, unless the ids are the row numbers):
 *
 * <ul>
 *   <li>delimited text (CSV, TSV): one record per node, the node id then f numbers; an optional
 *       header (recognised by a field in the number columns that is not a number) names the
 *       features; RFC 4180 quoting;
 *   <li>{@code .npz}: the arrays {@value FeatureTable#NPZ_FEATURES} (float [n, f]) and {@value
 *       FeatureTable#NPZ_NODE_IDS} (int64 [n]);
 *   <li>{@code .npy}: a float array [n, f] with its ids in a text file, one per line in row order:
 *       {@code --feature-ids FILE}, or {@code X.ids} beside {@code X.npy}. Without ids, row i is
 *       the node with id i, which needs every id of the graph to be an integer in {@code 0..n-1}.
 * </ul>
 *
 * An id that is not in the graph is a node without edges: it is added after the graph's nodes (see
 * {@link GraphInputs}). Every graph node needs a row.
 */
final class FeatureFiles {

  /** Suffix of the ids file found beside a {@code .npy} file: {@code X.npy} → {@code X.ids}. */
  static final String IDS_SUFFIX = ".ids";

  private static final int MAX_LISTED = 5;

  private FeatureFiles() {}

  /** What a command expects: a feature count and names (from the model), or anything (-1). */
  record Expected(int featureCount, List<String> names, String source) {
    static final Expected ANY = new Expected(-1, List.of(), "");
  }

  /** The rows with their ids, and the feature names a header gave (empty if none). */
  record Read(FeatureTable<String> table, List<String> names, String description) {}

  static Read read(
      Path file,
      Path idsFile,
      char delimiterSetting,
      NodeIndex<String> nodes,
      Expected expected,
      ProgressDisplay progress)
      throws IOException {
    String name = file.getFileName().toString().toLowerCase(Locale.ROOT);
    Read read;
    if (name.endsWith(".npz")) {
      if (idsFile != null) {
        throw new CliException(
            "--feature-ids is for .npy features; an .npz carries its ids as '"
                + FeatureTable.NPZ_NODE_IDS
                + "'",
            HeedCli.EXIT_USAGE);
      }
      read =
          new Read(
              FeatureTable.readNpz(file).mapIds(String::valueOf),
              List.of(),
              "ids from its '" + FeatureTable.NPZ_NODE_IDS + "'");
    } else if (name.endsWith(".npy")) {
      read = readNpy(file, idsFile, nodes);
    } else {
      if (idsFile != null) {
        throw new CliException(
            "--feature-ids is for .npy features; a text features file has the ids in its first"
                + " column",
            HeedCli.EXIT_USAGE);
      }
      try (ProgressDisplay.Bar bar = progress.bytes("read features", Files.size(file))) {
        read = readText(file, TextFields.delimiterOf(file, delimiterSetting), expected, bar);
      }
    }
    checkWidth(file, read.table().rows().featureCount(), expected);
    return read;
  }

  private static Read readNpy(Path file, Path idsFile, NodeIndex<String> nodes) throws IOException {
    Path ids = idsFile;
    if (ids == null) {
      String base = file.getFileName().toString();
      Path beside = file.resolveSibling(base.substring(0, base.length() - 4) + IDS_SUFFIX);
      ids = Files.isRegularFile(beside) ? beside : null;
    } else {
      ClassifyRun.requireFile(ids, "--feature-ids");
    }
    if (ids != null) {
      return new Read(FeatureTable.readNpy(file, ids), List.of(), "ids from " + ids.getFileName());
    }
    NodeFeatures rows = NodeFeatures.readNpy(file);
    int n = rows.nodeCount();
    List<String> notRowNumbers = new ArrayList<>();
    int count = 0;
    for (int i = 0; i < nodes.size(); i++) {
      String id = nodes.idOf(i);
      if (!isRowNumber(id, n) && count++ < MAX_LISTED) {
        notRowNumbers.add("'" + id + "'");
      }
    }
    if (count > 0) {
      throw new CliException(
          file
              + ": "
              + n
              + " rows without node ids, so row i can only be the node with id i, but "
              + count
              + " of the graph's "
              + nodes.size()
              + " node ids are not row numbers 0.."
              + (n - 1)
              + " ("
              + String.join(", ", notRowNumbers)
              + (count > MAX_LISTED ? ", ..." : "")
              + "); give the ids of the rows: --feature-ids FILE (one id per line, in row order),"
              + " a file "
              + file.getFileName().toString().replaceFirst("(?i)\\.npy$", IDS_SUFFIX)
              + " beside it, or an .npz with '"
              + FeatureTable.NPZ_FEATURES
              + "' and '"
              + FeatureTable.NPZ_NODE_IDS
              + "'",
          HeedCli.EXIT_USER_ERROR);
    }
    return new Read(
        FeatureTable.positional(rows).mapIds(String::valueOf), List.of(), "row i = node id i");
  }

  /** Whether an id is a row number in {@code 0..n-1}, written the canonical way ("7", not "07"). */
  private static boolean isRowNumber(String id, int n) {
    if (id.isEmpty() || id.length() > 10 || (id.length() > 1 && id.charAt(0) == '0')) {
      return false;
    }
    long v = 0;
    for (int i = 0; i < id.length(); i++) {
      char c = id.charAt(i);
      if (c < '0' || c > '9') {
        return false;
      }
      v = v * 10 + (c - '0');
    }
    return v < n;
  }

  private static Read readText(
      Path file, char delimiter, Expected expected, ProgressDisplay.Bar bar) throws IOException {
    List<String> ids = new ArrayList<>();
    RowBuffer rows = new RowBuffer(file);
    Map<String, Long> lineOf = new HashMap<>();
    List<String> names = new ArrayList<>();
    int[] width = {expected.featureCount()};
    TextFields.readRows(
        file,
        delimiter,
        bar,
        row -> {
          List<String> fields = row.fields();
          long line = row.line();
          if (ids.isEmpty() && names.isEmpty() && isHeader(fields)) {
            checkHeader(file, line, fields, expected);
            names.addAll(fields.subList(1, fields.size()));
            if (width[0] < 0) {
              width[0] = names.size();
            }
            return;
          }
          if (width[0] < 0) {
            width[0] = fields.size() - 1;
          }
          int f = width[0];
          if (fields.size() != f + 1 || f < 1) {
            throw new CliException(
                file
                    + ", line "
                    + line
                    + ": "
                    + (fields.size() - 1)
                    + " feature values, but "
                    + (expected.featureCount() >= 0
                        ? "the model reads " + f + " features per node" + names(expected)
                        : (names.isEmpty() ? "the first line has " : "the header names ") + f)
                    + " (expected: id, then "
                    + Math.max(f, 1)
                    + " numbers, separated by "
                    + TextFields.describe(delimiter)
                    + ")"
                    + delimiterHint(fields, delimiter),
                HeedCli.EXIT_USER_ERROR);
          }
          String id = fields.get(0);
          if (id.isEmpty()) {
            throw new CliException(
                file + ", line " + line + ": the node id (field 1) is empty",
                HeedCli.EXIT_USER_ERROR);
          }
          Long earlier = lineOf.putIfAbsent(id, line);
          if (earlier != null) {
            throw new CliException(
                file
                    + ", line "
                    + line
                    + ": node '"
                    + id
                    + "' already has features on line "
                    + earlier,
                HeedCli.EXIT_USER_ERROR);
          }
          parseRow(file, line, id, fields, rows.next(f), rows.count() * f);
          ids.add(id);
          rows.added();
        });
    if (rows.count() == 0) {
      throw new CliException(file + ": no feature rows in the file", HeedCli.EXIT_USER_ERROR);
    }
    return new Read(
        FeatureTable.of(ids, rows.finish()), List.copyOf(names), "ids in its first column");
  }

  /**
   * The rows of a text features file as they are read: one row-major array grown by doubling, each
   * growth checked against {@link MemoryBudget} first (with the ids read so far), so that a file
   * too large for the heap fails with the bytes it needs and the limit instead of an {@link
   * OutOfMemoryError}.
   */
  private static final class RowBuffer {
    /**
     * Heap an id holds while its rows are read: its {@code String}, the list slot and the entry of
     * the id-to-line map (an estimate for a 64-bit JVM with compressed references, from memory).
     */
    static final long BYTES_PER_ID = 120;

    private static final int FIRST_ROWS = 1024;

    private final Path file;
    private float[] values = new float[0];
    private int count;
    private int width;

    RowBuffer(Path file) {
      this.file = file;
    }

    /** The array to write the next row of {@code f} values into, at {@code count() * f}. */
    float[] next(int f) {
      width = f;
      if ((long) (count + 1) * f > values.length) {
        long rows = Math.max(FIRST_ROWS, 2L * count);
        if (rows * f > Integer.MAX_VALUE - 8) {
          rows = (Integer.MAX_VALUE - 8) / f;
          if (rows <= count) {
            throw new CliException(
                file
                    + ": more than "
                    + count
                    + " rows of "
                    + f
                    + " features, over the "
                    + (Integer.MAX_VALUE - 8)
                    + " values one feature matrix holds",
                HeedCli.EXIT_USER_ERROR);
          }
        }
        long bytes = 4 * rows * f + BYTES_PER_ID * rows;
        String what =
            "the features read from "
                + file
                + " (room for "
                + rows
                + " rows × "
                + f
                + " values and their ids)";
        MemoryBudget.check(what, bytes);
        try {
          values = Arrays.copyOf(values, (int) (rows * f));
        } catch (OutOfMemoryError e) {
          throw MemoryBudget.exceeded(what, bytes);
        }
      }
      return values;
    }

    /** Counts the row just written. */
    void added() {
      count++;
    }

    int count() {
      return count;
    }

    /**
     * The rows read, as node features: the rows trimmed to their count, then copied by {@link
     * NodeFeatures#ofRowMajor}, both checked against the budget first.
     */
    NodeFeatures finish() {
      MemoryBudget.check(
          "the node features of "
              + file
              + " ("
              + count
              + " × "
              + width
              + ", and their trimmed rows)",
          8L * count * width);
      return NodeFeatures.ofRowMajor(Arrays.copyOf(values, count * width), count, width);
    }
  }

  /** For a line read as one field: the usual delimiter it holds, as the option that reads it. */
  static String delimiterHint(List<String> fields, char delimiter) {
    if (fields.size() != 1) {
      return "";
    }
    for (char c : new char[] {'\t', ';', '|', ','}) {
      if (c != delimiter && fields.get(0).indexOf(c) >= 0) {
        String value = c == '\t' ? "tab" : "'" + c + "'";
        return "; the line holds " + value + ": use --delimiter " + value;
      }
    }
    return "";
  }

  /** The features aligned to {@code nodes}, which must hold every id of the table. */
  static NodeFeatures align(
      Path file, FeatureTable<String> table, NodeIndex<String> nodes, String hint) {
    try {
      return table.alignTo(nodes);
    } catch (IllegalArgumentException e) {
      throw new CliException(file + ": " + e.getMessage() + hint, HeedCli.EXIT_USER_ERROR);
    }
  }

  private static void checkWidth(Path file, int width, Expected expected) {
    if (expected.featureCount() >= 0 && width != expected.featureCount()) {
      throw new CliException(
          file
              + ": "
              + width
              + " feature columns, but the model reads "
              + expected.featureCount()
              + " features per node"
              + names(expected),
          HeedCli.EXIT_USER_ERROR);
    }
  }

  private static void parseRow(
      Path file, long line, String id, List<String> fields, float[] into, int offset) {
    int f = fields.size() - 1;
    for (int c = 0; c < f; c++) {
      String v = fields.get(c + 1);
      float x;
      try {
        x = Float.parseFloat(v);
      } catch (NumberFormatException e) {
        x = Float.NaN;
      }
      if (!Float.isFinite(x)) {
        throw new CliException(
            file
                + ", line "
                + line
                + ": feature "
                + (c + 1)
                + " of node '"
                + id
                + "' is '"
                + v
                + "', not a finite number",
            HeedCli.EXIT_USER_ERROR);
      }
      into[offset + c] = x;
    }
  }

  /** A header has a field after the id that is not a number. */
  private static boolean isHeader(List<String> fields) {
    for (int i = 1; i < fields.size(); i++) {
      try {
        Float.parseFloat(fields.get(i));
      } catch (NumberFormatException e) {
        return true;
      }
    }
    return false;
  }

  private static void checkHeader(Path file, long line, List<String> fields, Expected expected) {
    List<String> given = fields.subList(1, fields.size());
    if (given.isEmpty()) {
      throw new CliException(
          file + ", line " + line + ": the header names no features after the id column",
          HeedCli.EXIT_USER_ERROR);
    }
    if (expected.featureCount() < 0) {
      return;
    }
    if (given.size() != expected.featureCount()) {
      throw new CliException(
          file
              + ", line "
              + line
              + ": the header names "
              + given.size()
              + " features "
              + given
              + ", but the model reads "
              + expected.featureCount()
              + names(expected),
          HeedCli.EXIT_USER_ERROR);
    }
    if (!expected.names().isEmpty() && !expected.names().equals(given)) {
      throw new CliException(
          file
              + ", line "
              + line
              + ": the header's feature names "
              + given
              + " do not match the model's "
              + expected.names()
              + " (same names, same order)",
          HeedCli.EXIT_USER_ERROR);
    }
  }

  private static String names(Expected expected) {
    return expected.names().isEmpty() ? "" : " " + expected.names();
  }
}
