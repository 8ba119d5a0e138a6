package dev.heed.cli;

import dev.heed.graph.NodeIndex;
import java.io.IOException;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import java.util.SplittableRandom;
import java.util.TreeSet;

/**
 * Reads the labels file of {@code heed train}: delimited text, one record {@code id,label[,split]}
 * per labelled node, split {@code train}, {@code validation} or {@code test}. A first record whose
 * id is not a graph node is a header, whatever it names. Labelled nodes without a split go {@value
 * TrainCommand#VALIDATION_PERCENT} % to validation, the rest to training, by the seed. Every
 * problem is a {@link CliException} with the file, the line and the fault.
 */
final class LabelFiles {

  private LabelFiles() {}

  /**
   * The labels read: class labels in sorted order, each node's class index (-1 if unlabelled), the
   * node indices of each split, and the header record (null if none).
   */
  record Table(
      List<String> classes,
      int[] label,
      int[] train,
      int[] validation,
      int[] test,
      List<String> header) {}

  /**
   * Reads a labels file.
   *
   * @param labels the file
   * @param delimiterSetting the delimiter, or 0 to choose by the file's extension
   * @param nodes the graph's node ids
   * @param n the node count (graph nodes and nodes that only have features)
   * @param seed the seed of the split of labelled nodes without a split column
   * @return the labels
   * @throws CliException naming file and line for a malformed record, an unknown or repeated id, an
   *     empty label, an unknown split, or no training node
   * @throws IOException if the file cannot be read
   */
  static Table read(Path labels, char delimiterSetting, NodeIndex<String> nodes, int n, long seed)
      throws IOException {
    char delimiter = TextFields.delimiterOf(labels, delimiterSetting);
    List<TextFields.Row> rows = new ArrayList<>();
    List<List<String>> header = new ArrayList<>();
    TextFields.readRows(
        labels,
        delimiter,
        row -> {
          List<String> f = row.fields();
          if (rows.isEmpty() && header.isEmpty() && !f.isEmpty() && nodes.indexOf(f.get(0)) < 0) {
            header.add(f); // the first id is not a node: a header, whatever its names
            return;
          }
          if (f.size() != 2 && f.size() != 3) {
            throw userError(
                labels,
                row.line(),
                f.size()
                    + " fields, expected id,label[,split] separated by "
                    + TextFields.describe(delimiter)
                    + FeatureFiles.delimiterHint(f, delimiter));
          }
          rows.add(row);
        });
    TreeSet<String> classSet = new TreeSet<>();
    for (TextFields.Row r : rows) {
      classSet.add(r.fields().get(1));
    }
    List<String> classes = List.copyOf(classSet);
    int[] label = new int[n];
    Arrays.fill(label, -1);
    List<Integer> train = new ArrayList<>();
    List<Integer> validation = new ArrayList<>();
    List<Integer> test = new ArrayList<>();
    List<Integer> unsplit = new ArrayList<>();
    for (TextFields.Row r : rows) {
      List<String> f = r.fields();
      int node = nodes.indexOf(f.get(0));
      if (node < 0) {
        throw userError(labels, r.line(), "id '" + f.get(0) + "' is not in the graph");
      }
      if (label[node] >= 0) {
        throw userError(labels, r.line(), "id '" + f.get(0) + "' is labelled twice");
      }
      if (f.get(1).isEmpty()) {
        throw userError(labels, r.line(), "the label of '" + f.get(0) + "' is empty");
      }
      label[node] = classes.indexOf(f.get(1));
      String split = f.size() == 3 ? f.get(2).toLowerCase(Locale.ROOT) : "";
      switch (split) {
        case "train" -> train.add(node);
        case "validation" -> validation.add(node);
        case "test" -> test.add(node);
        case "" -> unsplit.add(node);
        default ->
            throw userError(
                labels, r.line(), "split '" + f.get(2) + "'; expected train, validation or test");
      }
    }
    SplittableRandom random = new SplittableRandom(seed);
    for (int node : unsplit) {
      (random.nextInt(100) < TrainCommand.VALIDATION_PERCENT ? validation : train).add(node);
    }
    if (train.isEmpty()) {
      throw new CliException(labels + ": no training nodes", HeedCli.EXIT_USER_ERROR);
    }
    return new Table(
        classes,
        label,
        ints(train),
        ints(validation),
        ints(test),
        header.isEmpty() ? null : header.get(0));
  }

  private static int[] ints(List<Integer> list) {
    return list.stream().mapToInt(Integer::intValue).toArray();
  }

  private static CliException userError(Path file, long line, String problem) {
    return new CliException(file + ", line " + line + ": " + problem, HeedCli.EXIT_USER_ERROR);
  }
}
