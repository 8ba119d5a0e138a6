package dev.heed.cli;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.NodeIndex;
import dev.heed.model.AttentionModel;
import java.io.BufferedReader;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;

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
 * Every graph node needs a row. With a text file, an id that is not in the graph is a node without
 * edges: it is added after the graph's nodes (see {@link ClassifyRun}).
 */
final class FeatureFiles {

  private static final int MAX_LISTED = 5;

  private FeatureFiles() {}

  /**
   * Features for the graph's n nodes (rows 0..n-1) followed by one row per id of the features file
   * that is not in the graph (a node without edges), in file order; {@code edgeless} lists those.
   */
  record Read(NodeFeatures features, List<String> edgeless) {}

  static Read read(Path file, char delimiterSetting, NodeIndex<String> nodes, AttentionModel model)
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
      return new Read(features, List.of());
    }
    return readText(file, TextFields.delimiterOf(file, delimiterSetting), nodes, model);
  }

  private static Read readText(
      Path file, char delimiter, NodeIndex<String> nodes, AttentionModel model) throws IOException {
    int n = nodes.size();
    int f = model.inputFeatureCount();
    float[] values = new float[Math.multiplyExact(n, f)];
    long[] lineOf = new long[n];
    long line = 0;
    boolean first = true;
    Map<String, Long> edgelessLines = new LinkedHashMap<>();
    List<float[]> edgelessRows = new ArrayList<>();
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
        if (id.isEmpty()) {
          throw new CliException(
              file + ", line " + line + ": the node id (field 1) is empty",
              HeedCli.EXIT_USER_ERROR);
        }
        int node = nodes.indexOf(id);
        long earlier = node >= 0 ? lineOf[node] : edgelessLines.getOrDefault(id, 0L);
        if (earlier != 0) {
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
        float[] row = parseRow(file, line, id, fields, f);
        if (node < 0) {
          edgelessLines.put(id, line);
          edgelessRows.add(row);
          continue;
        }
        System.arraycopy(row, 0, values, node * f, f);
        lineOf[node] = line;
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
    int k = edgelessRows.size();
    float[] all = values;
    if (k > 0) {
      all = java.util.Arrays.copyOf(values, Math.multiplyExact(n + k, f));
      for (int i = 0; i < k; i++) {
        System.arraycopy(edgelessRows.get(i), 0, all, (n + i) * f, f);
      }
    }
    return new Read(NodeFeatures.ofRowMajor(all, n + k, f), List.copyOf(edgelessLines.keySet()));
  }

  private static float[] parseRow(Path file, long line, String id, List<String> fields, int f) {
    float[] row = new float[f];
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
      row[c] = x;
    }
    return row;
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
