package dev.heed.cli;

import dev.heed.demo.DemoGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.SelfLoopPolicy;
import java.io.IOException;
import java.nio.file.Path;
import java.util.List;
import java.util.Locale;
import java.util.Set;
import picocli.CommandLine.Option;

/**
 * How {@code heed classify} reads an edge-list file into a graph. The defaults are the demo's
 * policy ({@link DemoGraph}): edges {@code source -> target}, made undirected (symmetrised), a
 * self-loop added to every node, repeated edges merged.
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
          "Field delimiter of the graph and features files: auto (by extension: .tsv tab, .csv"
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
              + " receiver, node, u, v). Lines starting with # are comments. Default:"
              + " ${DEFAULT-VALUE}.")
  String edgeHeader;

  @Option(
      names = "--direction",
      paramLabel = "symmetrise|keep",
      defaultValue = "symmetrise",
      description =
          "symmetrise: every edge counts both ways; keep: a line 's,t' makes t attend to s only."
              + " Default: ${DEFAULT-VALUE}.")
  String direction;

  @Option(
      names = "--self-loops",
      paramLabel = "add|as-given",
      defaultValue = "add",
      description =
          "add: every node also attends to itself (the GAT convention); as-given: only where the"
              + " file has a line 'i,i'. Default: ${DEFAULT-VALUE}.")
  String selfLoops;

  @Option(
      names = "--duplicates",
      paramLabel = "merge|reject",
      defaultValue = "merge",
      description =
          "merge: a repeated edge counts once; reject: a repeated edge is an error. Default:"
              + " ${DEFAULT-VALUE}.")
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

  DirectionPolicy directionPolicy() {
    return switch (direction.toLowerCase(Locale.ROOT)) {
      case "symmetrise", "symmetrize", "undirected" -> DirectionPolicy.SYMMETRISE;
      case "keep", "directed" -> DirectionPolicy.KEEP;
      default -> throw usage("--direction", direction, "symmetrise or keep");
    };
  }

  SelfLoopPolicy selfLoopPolicy() {
    return switch (selfLoops.toLowerCase(Locale.ROOT)) {
      case "add" -> SelfLoopPolicy.ADD;
      case "as-given", "as_given" -> SelfLoopPolicy.AS_GIVEN;
      default -> throw usage("--self-loops", selfLoops, "add or as-given");
    };
  }

  DuplicatePolicy duplicatePolicy() {
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
  }

  /** Reads the graph; ids are text, numbered in order of first appearance. */
  EdgeListResult<String> read(Path file) throws IOException {
    char d = TextFields.delimiterOf(file, delimiterSetting());
    return EdgeListFileBuilder.stringIds(file)
        .delimiter(d)
        .header(hasHeader(file, d))
        .direction(directionPolicy())
        .selfLoops(selfLoopPolicy())
        .duplicates(duplicatePolicy())
        .build();
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
        String first = TextFields.firstDataLine(file);
        if (first == null) {
          return false;
        }
        for (String field : TextFields.split(first, d)) {
          if (HEADER_NAMES.contains(field.toLowerCase(Locale.ROOT))) {
            return true;
          }
        }
        return false;
    }
  }

  private static CliException usage(String option, String value, String expected) {
    return new CliException(
        option + " must be " + expected + ", got '" + value + "'", HeedCli.EXIT_USAGE);
  }
}
