package dev.heed.cli;

import dev.heed.demo.DemoGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListFormatException;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.Optional;
import java.util.Set;
import picocli.CommandLine.Option;

/**
 * How {@code heed classify} and {@code heed train} read an edge-list file into a graph: one option
 * group, the same names and defaults in both. The defaults are the demo's policy ({@link
 * DemoGraph}): edges {@code source -> target}, made undirected (symmetrised), a self-loop added to
 * every node, repeated edges merged.
 */
final class GraphFileOptions {

  /** First-line field names that mark an edge-list header in {@code --edge-header auto}. */
  static final Set<String> HEADER_NAMES =
      Set.of(
          "source",
          "target",
          "src",
          "dst",
          "dest",
          "destination",
          "from",
          "to",
          "sender",
          "receiver",
          "node",
          "node1",
          "node2",
          "u",
          "v");

  @Option(
      names = "--delimiter",
      paramLabel = "D",
      defaultValue = "auto",
      description =
          "Field delimiter of the graph, features and labels files: auto (by extension: .tsv tab, .csv"
              + " comma; otherwise sniffed from the first line), comma, tab, space, ';' or '|'."
              + " Default: ${DEFAULT-VALUE}.")
  String delimiter;

  @Option(
      names = "--edge-header",
      paramLabel = "auto|yes|no",
      defaultValue = "auto",
      description =
          "Whether the graph file's first line is a header. auto: yes when a field of the first"
              + " line is a usual column name (source, target, src, dst, from, to, sender,"
              + " receiver, node, u, v) or a column is chosen by name. Lines starting with # are"
              + " comments; fields may be quoted (RFC 4180). Default: ${DEFAULT-VALUE}.")
  String edgeHeader;

  @Option(
      names = "--source-column",
      paramLabel = "NAME|N",
      description =
          "The column holding the source ids: a header name, or a column number from 1 (default:"
              + " the first column). Choosing a column passes over the file's other columns.")
  String sourceColumn;

  @Option(
      names = "--target-column",
      paramLabel = "NAME|N",
      description =
          "The column holding the target ids: a header name, or a column number from 1 (default:"
              + " the second column).")
  String targetColumn;

  @Option(
      names = "--ignore-extra-columns",
      description =
          "Pass over columns after the two ids (weights, timestamps); without it such a line is"
              + " an error, so a file of another shape is noticed.")
  boolean ignoreExtraColumns;

  @Option(
      names = "--direction",
      paramLabel = "symmetrise|keep",
      description =
          "symmetrise: every edge counts both ways; keep: a line 's,t' makes t attend to s only."
              + " Default for classify: what the model file records (its training graph's"
              + " conventions); for train, and for models that record none: symmetrise. The"
              + " self-loop and duplicate options follow the same rule.")
  String direction;

  @Option(
      names = "--self-loops",
      paramLabel = "add|as-given",
      description =
          "add: every node also attends to itself (the GAT convention); as-given: only where the"
              + " file has a line 'i,i'. Default: as the model records, else add.")
  String selfLoops;

  @Option(
      names = "--duplicates",
      paramLabel = "merge|reject",
      description =
          "merge: a repeated edge counts once; reject: a repeated edge is an error. Default: as"
              + " the model records, else merge.")
  String duplicates;

  /**
   * The demo's options: the policy of {@link DemoGraph}, the graph the demo model was trained on.
   */
  static GraphFileOptions demo() {
    GraphFileOptions o = new GraphFileOptions();
    o.delimiter = "auto";
    o.edgeHeader = "auto";
    o.direction = DemoGraph.DIRECTION == DirectionPolicy.SYMMETRISE ? "symmetrise" : "keep";
    o.selfLoops = DemoGraph.SELF_LOOPS == SelfLoopPolicy.ADD ? "add" : "as-given";
    o.duplicates = DemoGraph.DUPLICATES == DuplicatePolicy.MERGE ? "merge" : "reject";
    return o;
  }

  char delimiterSetting() {
    return TextFields.parseDelimiter(delimiter);
  }

  /**
   * The conventions when an option is not given and no model says otherwise: the demo model's, and
   * the graph-attention papers' (undirected ties, a self-loop per node, repeated ties merged).
   */
  static final GraphPolicies DEFAULTS = GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS;

  /** The three policies as given, or as defaulted. */
  GraphPolicies policies() {
    return new GraphPolicies(directionPolicy(), selfLoopPolicy(), duplicatePolicy());
  }

  /**
   * Builds the graph the way the model's training graph was built: options not given take the
   * recorded conventions; an option given with another value is refused unless {@code override}
   * (then a warning names the difference). A model that records none leaves the options and their
   * defaults, with a warning.
   *
   * @param recorded the model's conventions, if it records them
   * @param override whether explicit options may differ from the recorded ones
   * @return the warning to print once the inputs have been read, if any (printed later, so that an
   *     error in the inputs stays the one line on stderr)
   * @throws CliException (user error) naming each difference and both ways to resolve it
   */
  Optional<String> followModel(Optional<GraphPolicies> recorded, boolean override) {
    if (recorded.isEmpty()) {
      return Optional.of(
          "warning: the model does not record how its training graph was built; building this"
              + " graph with "
              + policies()
              + ". If the model was trained on another graph convention, say so with"
              + " --direction, --self-loops and --duplicates.");
    }
    GraphPolicies model = recorded.get();
    GraphPolicies asked =
        new GraphPolicies(
            direction == null ? model.direction() : directionPolicy(),
            selfLoops == null ? model.selfLoops() : selfLoopPolicy(),
            duplicates == null ? model.duplicates() : duplicatePolicy());
    List<String> differences = model.differences(asked);
    if (!differences.isEmpty() && !override) {
      throw new CliException(
          "the graph options differ from the conventions the model was trained with ("
              + model
              + "): "
              + String.join("; ", differences)
              + ". Predictions on a graph built another way are silently different. Drop those"
              + " options to use the model's conventions, or add --override-graph-policies if"
              + " you mean it.",
          HeedCli.EXIT_USER_ERROR);
    }
    direction = GraphPolicies.word(asked.direction());
    selfLoops = GraphPolicies.word(asked.selfLoops());
    duplicates = GraphPolicies.word(asked.duplicates());
    if (!differences.isEmpty()) {
      return Optional.of(
          "warning: building the graph unlike the model's training graph ("
              + String.join("; ", differences)
              + "), as --override-graph-policies asks");
    }
    return Optional.empty();
  }

  DirectionPolicy directionPolicy() {
    if (direction == null) {
      return DEFAULTS.direction();
    }
    return switch (direction.toLowerCase(Locale.ROOT)) {
      case "symmetrise", "symmetrize", "undirected" -> DirectionPolicy.SYMMETRISE;
      case "keep", "directed" -> DirectionPolicy.KEEP;
      default -> throw usage("--direction", direction, "symmetrise or keep");
    };
  }

  SelfLoopPolicy selfLoopPolicy() {
    if (selfLoops == null) {
      return DEFAULTS.selfLoops();
    }
    return switch (selfLoops.toLowerCase(Locale.ROOT)) {
      case "add" -> SelfLoopPolicy.ADD;
      case "as-given", "as_given" -> SelfLoopPolicy.AS_GIVEN;
      default -> throw usage("--self-loops", selfLoops, "add or as-given");
    };
  }

  DuplicatePolicy duplicatePolicy() {
    if (duplicates == null) {
      return DEFAULTS.duplicates();
    }
    return switch (duplicates.toLowerCase(Locale.ROOT)) {
      case "merge" -> DuplicatePolicy.MERGE;
      case "reject" -> DuplicatePolicy.REJECT;
      default -> throw usage("--duplicates", duplicates, "merge or reject");
    };
  }

  /** Checks every option value, so usage errors come before any file is read. */
  void validate() {
    delimiterSetting();
    directionPolicy();
    selfLoopPolicy();
    duplicatePolicy();
    if (!List.of("auto", "yes", "no").contains(edgeHeader.toLowerCase(Locale.ROOT))) {
      throw usage("--edge-header", edgeHeader, "auto, yes or no");
    }
    for (String column : new String[] {sourceColumn, targetColumn}) {
      if (column != null) {
        if (column.isBlank()) {
          throw new CliException("a column name must not be empty", HeedCli.EXIT_USAGE);
        }
        columnNumber(column);
      }
    }
    if (isName(sourceColumn) || isName(targetColumn)) {
      if (edgeHeader.equalsIgnoreCase("no")) {
        throw new CliException(
            "--source-column and --target-column name header columns, but --edge-header is no;"
                + " give column numbers (from 1) instead, or let the header be read",
            HeedCli.EXIT_USAGE);
      }
    }
  }

  /**
   * Reads the graph; ids are text, numbered in order of first appearance. A line the reader cannot
   * take fails with the option that would read it.
   */
  EdgeListResult<String> read(Path file, ProgressDisplay progress) throws IOException {
    char d = TextFields.delimiterOf(file, delimiterSetting());
    boolean header = hasHeader(file, d);
    headerUsed = header;
    EdgeListFileBuilder<String> builder =
        EdgeListFileBuilder.stringIds(file)
            .delimiter(d)
            .header(header)
            .ignoreExtraColumns(ignoreExtraColumns)
            .direction(directionPolicy())
            .selfLoops(selfLoopPolicy())
            .duplicates(duplicatePolicy());
    if (sourceColumn != null) {
      int n = columnNumber(sourceColumn);
      if (n >= 0) {
        builder.sourceColumn(n);
      } else {
        builder.sourceColumn(sourceColumn);
      }
    }
    if (targetColumn != null) {
      int n = columnNumber(targetColumn);
      if (n >= 0) {
        builder.targetColumn(n);
      } else {
        builder.targetColumn(targetColumn);
      }
    }
    try (ProgressDisplay.Bar bar = progress.bytes("read graph", 2 * Files.size(file))) {
      long size = Files.size(file);
      builder.progress((pass, passes, done, total) -> bar.stepTo((pass - 1) * size + done));
      return builder.build();
    } catch (EdgeListFormatException e) {
      throw new CliException(
          e.file() + ", line " + e.lineNumber() + ": " + e.reason() + remedy(e),
          HeedCli.EXIT_USER_ERROR);
    }
  }

  /** Whether the graph file's first line was taken as a header by the last {@link #read}. */
  boolean headerUsed() {
    return headerUsed;
  }

  private boolean headerUsed;

  /** The option that reads a line the reader rejected, as a clause to append. */
  private static String remedy(EdgeListFormatException e) {
    return switch (e.remedy()) {
      case NONE -> "";
      case DELIMITER ->
          "; the line holds '" + e.remedyValue() + "': use --delimiter '" + e.remedyValue() + "'";
      case HEADER -> "; if it is a header line, add --edge-header yes";
      case EXTRA_COLUMNS ->
          "; choose the id columns with --source-column and --target-column, or add"
              + " --ignore-extra-columns";
    };
  }

  /** A column given as a number from 1, as a 0-based index; -1 for a name. */
  private static int columnNumber(String value) {
    if (!value.matches("[0-9]+")) {
      return -1;
    }
    int n;
    try {
      n = Integer.parseInt(value);
    } catch (NumberFormatException e) {
      n = 0;
    }
    if (n < 1) {
      throw new CliException(
          "a column number counts from 1, got '" + value + "'", HeedCli.EXIT_USAGE);
    }
    return n - 1;
  }

  /** Describes the policies for the summary. */
  String describePolicies() {
    return (directionPolicy() == DirectionPolicy.SYMMETRISE ? "symmetrised" : "directed")
        + ", self-loops "
        + (selfLoopPolicy() == SelfLoopPolicy.ADD ? "added" : "as given")
        + ", duplicates "
        + (duplicatePolicy() == DuplicatePolicy.MERGE ? "merged" : "rejected");
  }

  private boolean hasHeader(Path file, char d) throws IOException {
    switch (edgeHeader.toLowerCase(Locale.ROOT)) {
      case "yes":
        return true;
      case "no":
        return false;
      default:
        if (isName(sourceColumn) || isName(targetColumn)) {
          return true;
        }
        List<String> first = TextFields.firstRow(file, d);
        if (first == null) {
          return false;
        }
        for (String field : first) {
          if (HEADER_NAMES.contains(field.toLowerCase(Locale.ROOT))) {
            return true;
          }
        }
        return false;
    }
  }

  private static boolean isName(String column) {
    return column != null && columnNumber(column) < 0;
  }

  private static CliException usage(String option, String value, String expected) {
    return new CliException(
        option + " must be " + expected + ", got '" + value + "'", HeedCli.EXIT_USAGE);
  }
}
