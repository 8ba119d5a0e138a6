package dev.heed.cli;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.NodeIndex;
import dev.heed.model.AttentionModel;
import java.io.BufferedReader;
import java.io.IOException;
import java.io.PrintWriter;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Reads node features for {@code heed classify}, lined up with the graph's nodes.
 *
 * <ul>
 *   <li>{@code .npy}: a float32 or float64 array [n, f], row i for node i in the graph's node order
 *       (the order in which ids first appear in the edge-list file, source before target on each
 *       line);
 *   <li>anything else: delimited text, one line per node: the node id, then f numbers. An optional
 *       header line (recognised by a field in the number columns that is not a number) names the
 *       columns; if the model has feature names, the header's must equal them, in order. Blank
 *       lines and lines starting with # are passed over; there is no quoting.
 * </ul>
 *
 * Every graph node needs a row; ids that are not in the graph are reported and passed over.
 */
final class FeatureFiles {

  private static final int MAX_LISTED = 5;

  private FeatureFiles() {}

  static NodeFeatures read(
      Path file,
      char delimiterSetting,
      NodeIndex<String> nodes,
      AttentionModel model,
      PrintWriter err)
      throws IOException {
    int f = model.inputFeatureCount();
    if (file.getFileName().toString().toLowerCase(Locale.ROOT).endsWith(".npy")) {
      NodeFeatures features = NodeFeatures.readNpy(file);
      if (features.featureCount() != f) {
        throw new CliException(
            file
                + ": "
                + features.featureCount()
                + " feature columns, but the model reads "
                + f
                + " features per node"
                + names(model),
            HeedCli.EXIT_USER_ERROR);
      }
      if (features.nodeCount() != nodes.size()) {
        throw new CliException(
            file
                + ": "
                + features.nodeCount()
                + " rows, but the graph has "
                + nodes.size()
                + " nodes; a .npy file needs one row per node in the graph's node order (order"
                + " of first appearance in the edge list), or use a CSV file with an id column",
            HeedCli.EXIT_USER_ERROR);
      }
      return features;
    }
    return readText(file, TextFields.delimiterOf(file, delimiterSetting), nodes, model, err);
  }

  private static NodeFeatures readText(
      Path file, char delimiter, NodeIndex<String> nodes, AttentionModel model, PrintWriter err)
      throws IOException {
    int n = nodes.size();
    int f = model.inputFeatureCount();
    float[] values = new float[Math.multiplyExact(n, f)];
    long[] lineOf = new long[n];
    long line = 0;
    boolean first = true;
    long unknown = 0;
    String firstUnknown = null;
    long firstUnknownLine = 0;
    try (BufferedReader in = Files.newBufferedReader(file, StandardCharsets.UTF_8)) {
      for (String text = in.readLine(); text != null; text = in.readLine()) {
        line++;
        if (TextFields.isBlankOrComment(text)) {
          continue;
        }
        List<String> fields = TextFields.split(text, delimiter);
        if (first) {
          first = false;
          if (isHeader(fields)) {
            checkHeader(file, line, fields, model);
            continue;
          }
        }
        if (fields.size() != f + 1) {
          throw new CliException(
              file
                  + ", line "
                  + line
                  + ": "
                  + (fields.size() - 1)
                  + " feature values, but the model reads "
                  + f
                  + " features per node"
                  + names(model)
                  + " (expected: id, then "
                  + f
                  + " numbers, separated by "
                  + TextFields.describe(delimiter)
                  + ")",
              HeedCli.EXIT_USER_ERROR);
        }
        String id = fields.get(0);
        int node = id.isEmpty() ? -1 : nodes.indexOf(id);
        if (node < 0) {
          if (unknown++ == 0) {
            firstUnknown = id;
            firstUnknownLine = line;
          }
          continue;
        }
        if (lineOf[node] != 0) {
          throw new CliException(
              file
                  + ", line "
                  + line
                  + ": node '"
                  + id
                  + "' already has features on line "
                  + lineOf[node],
              HeedCli.EXIT_USER_ERROR);
        }
        lineOf[node] = line;
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
          values[node * f + c] = x;
        }
      }
    } catch (java.nio.charset.MalformedInputException e) {
      throw new CliException(
          file + ", line " + (line + 1) + ": not valid UTF-8 text", HeedCli.EXIT_USER_ERROR);
    }
    List<String> missing = new ArrayList<>();
    long missingCount = 0;
    for (int i = 0; i < n; i++) {
      if (lineOf[i] == 0) {
        if (missingCount++ < MAX_LISTED) {
          missing.add("'" + nodes.idOf(i) + "'");
        }
      }
    }
    if (missingCount > 0) {
      throw new CliException(
          file
              + ": no features for "
              + missingCount
              + " of the graph's "
              + n
              + " nodes, for example "
              + String.join(", ", missing)
              + "; every node in the graph needs a line",
          HeedCli.EXIT_USER_ERROR);
    }
    if (unknown > 0) {
      err.printf(
          "heed: note: %s: passed over %d ids that are not in the graph, such as nodes with no"
              + " edges (first: '%s' on line %d)%n",
          file, unknown, firstUnknown, firstUnknownLine);
    }
    return NodeFeatures.ofRowMajor(values, n, f);
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

  private static void checkHeader(Path file, long line, List<String> fields, AttentionModel model) {
    List<String> given = fields.subList(1, fields.size());
    List<String> expected = model.featureNames();
    if (given.size() != model.inputFeatureCount()) {
      throw new CliException(
          file
              + ", line "
              + line
              + ": the header names "
              + given.size()
              + " features "
              + given
              + ", but the model reads "
              + model.inputFeatureCount()
              + names(model),
          HeedCli.EXIT_USER_ERROR);
    }
    if (!expected.isEmpty() && !expected.equals(given)) {
      throw new CliException(
          file
              + ", line "
              + line
              + ": the header's feature names "
              + given
              + " do not match the model's "
              + expected
              + " (same names, same order)",
          HeedCli.EXIT_USER_ERROR);
    }
  }

  private static String names(AttentionModel model) {
    return model.featureNames().isEmpty() ? "" : " " + model.featureNames();
  }
}
