package dev.heed.cli;

import com.fasterxml.jackson.databind.ObjectMapper;
import dev.heed.model.ModelFile;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import java.io.IOException;
import java.io.InputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.SplittableRandom;

/** Input files for the CLI tests: a seeded random graph with features, and small models. */
final class CliFixtures {

  /** Feature names of the attention-core fixture model mixed.heed (5 features, 3 labels). */
  static final List<String> MIXED_FEATURES = List.of("f0", "f1", "f2", "f3", "f4");

  static final List<String> MIXED_LABELS = List.of("alpha", "beta", "gamma");

  private CliFixtures() {}

  /** Copies the attention-core fixture model (a copy lives in the CLI's test resources). */
  static Path mixedModel(Path dir) throws IOException {
    Path file = dir.resolve("mixed.heed");
    try (InputStream in = CliFixtures.class.getResourceAsStream("/dev/heed/cli/mixed.heed")) {
      Files.copy(in, file);
    }
    return file;
  }

  /** A graph as edge lines over text ids, with features per id. */
  record Data(List<String> ids, List<String[]> edges, float[][] features, long seed) {

    /** Node ids in the order the edge-list reader numbers them: first appearance. */
    List<String> nodeOrder() {
      java.util.LinkedHashSet<String> order = new java.util.LinkedHashSet<>();
      for (String[] e : edges) {
        order.add(e[0]);
        order.add(e[1]);
      }
      return new ArrayList<>(order);
    }

    float[] featuresOf(String id) {
      return features[ids.indexOf(id)];
    }

    /** Writes the edges with a header line and the given delimiter. */
    Path writeEdges(Path file, String delimiter, boolean header) throws IOException {
      StringBuilder s = new StringBuilder(header ? "source" + delimiter + "target\n" : "");
      for (String[] e : edges) {
        s.append(e[0]).append(delimiter).append(e[1]).append('\n');
      }
      return Files.writeString(file, s, StandardCharsets.UTF_8);
    }

    /** Writes "id,f0,...": rows in a shuffled order, so the reader must match ids. */
    Path writeFeaturesCsv(Path file, List<String> names) throws IOException {
      StringBuilder s = new StringBuilder();
      if (names != null) {
        s.append("id,").append(String.join(",", names)).append('\n');
      }
      List<Integer> rows = new ArrayList<>();
      for (int i = 0; i < ids.size(); i++) {
        rows.add(i);
      }
      java.util.Collections.shuffle(rows, new java.util.Random(seed));
      for (int i : rows) {
        s.append(ids.get(i));
        for (float v : features[i]) {
          s.append(',').append(Float.toString(v));
        }
        s.append('\n');
      }
      return Files.writeString(file, s, StandardCharsets.UTF_8);
    }

    /** Writes a .npy [n, f] float32 in the graph's node order, and its ids as X.ids beside it. */
    Path writeFeaturesNpy(Path file) throws IOException {
      writeFeaturesNpyWithoutIds(file);
      String name = file.getFileName().toString();
      Files.write(
          file.resolveSibling(name.substring(0, name.length() - 4) + ".ids"),
          nodeOrder(),
          StandardCharsets.UTF_8);
      return file;
    }

    /** Writes a .npy [n, f] float32 in the graph's node order, without ids. */
    Path writeFeaturesNpyWithoutIds(Path file) throws IOException {
      List<String> order = nodeOrder();
      int f = features[0].length;
      float[] values = new float[order.size() * f];
      for (int i = 0; i < order.size(); i++) {
        System.arraycopy(featuresOf(order.get(i)), 0, values, i * f, f);
      }
      Npy.write(NpyArray.ofFloats(values, order.size(), f), file);
      return file;
    }
  }

  /** The files of one {@code heed classify} run. */
  record ClassifyInputs(Path model, Path graph, Path features) {

    /** The arguments {@code classify --model M --graph G --features X}, then {@code more}. */
    String[] args(String... more) {
      List<String> args =
          new ArrayList<>(
              List.of(
                  "classify",
                  "--model",
                  model.toString(),
                  "--graph",
                  graph.toString(),
                  "--features",
                  features.toString()));
      args.addAll(List.of(more));
      return args.toArray(String[]::new);
    }
  }

  /** n nodes named "acct-i" in a ring plus random chords, and features in [-1, 1). */
  static Data randomData(int n, int chords, int featureCount, long seed) {
    SplittableRandom random = new SplittableRandom(seed);
    List<String> ids = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      ids.add(String.format(Locale.ROOT, "acct-%03d", i));
    }
    List<String[]> edges = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      edges.add(new String[] {ids.get(i), ids.get((i + 1) % n)});
    }
    for (int c = 0; c < chords; c++) {
      edges.add(new String[] {ids.get(random.nextInt(n)), ids.get(random.nextInt(n))});
    }
    float[][] features = new float[n][featureCount];
    for (float[] row : features) {
      for (int j = 0; j < featureCount; j++) {
        row[j] = (float) (2 * random.nextDouble() - 1);
      }
    }
    return new Data(ids, edges, features, seed);
  }

  /**
   * Writes a model shaped like the demo's (the demo's 6 features, its 3 roles) with seeded random
   * weights: one GAT layer (2 heads of width 3, averaged) and softmax. Not the demo model: its
   * scores mean nothing; it exercises the demo's plumbing.
   */
  static Path demoShapedModel(Path file, List<String> features, List<String> labels, long seed)
      throws IOException {
    String description =
        """
        {"format": "heed-model", "format_version": 1, "input_features": %d,
         "feature_names": [%s], "class_labels": [%s],
         "layers": [
          {"kind": "graph_attention", "name": "gat", "score": "gat", "heads": 2, "head_width": 3,
           "combine_heads": "mean", "leaky_relu_slope": 0.2, "activation": "identity",
           "bias": true, "residual": "none",
           "tensors": {"weight": "gat.weight", "attention_target": "gat.attention_target",
                       "attention_source": "gat.attention_source", "bias": "gat.bias"}},
          {"kind": "softmax", "name": "probabilities", "tensors": {}}]}
        """
            .formatted(features.size(), quoted(features), quoted(labels));
    SplittableRandom random = new SplittableRandom(seed);
    Map<String, NpyArray> tensors = new LinkedHashMap<>();
    tensors.put("gat.weight", randomArray(random, features.size(), 6));
    tensors.put("gat.attention_target", randomArray(random, 2, 3));
    tensors.put("gat.attention_source", randomArray(random, 2, 3));
    tensors.put("gat.bias", randomArray(random, 3));
    ModelFile.write(ModelFile.fromParts(description, tensors), file);
    return file;
  }

  /** Names as JSON strings, escaped (labels in tests may hold quotes and line breaks). */
  private static String quoted(List<String> names) throws IOException {
    String array = new ObjectMapper().writeValueAsString(names);
    return array.substring(1, array.length() - 1);
  }

  private static NpyArray randomArray(SplittableRandom random, int... shape) {
    int size = 1;
    for (int d : shape) {
      size *= d;
    }
    float[] v = new float[size];
    for (int i = 0; i < size; i++) {
      v[i] = (float) (2 * random.nextDouble() - 1);
    }
    return NpyArray.ofFloats(v, shape);
  }

  /**
   * Parses CSV text with RFC 4180 rules (quoted fields may hold commas, doubled quotes and line
   * breaks) into records of fields.
   */
  static List<List<String>> csvRecords(String text) {
    List<List<String>> records = new ArrayList<>();
    List<String> record = new ArrayList<>();
    StringBuilder field = new StringBuilder();
    boolean quoted = false;
    for (int i = 0; i < text.length(); i++) {
      char c = text.charAt(i);
      if (quoted) {
        if (c == '"' && i + 1 < text.length() && text.charAt(i + 1) == '"') {
          field.append('"');
          i++;
        } else if (c == '"') {
          quoted = false;
        } else {
          field.append(c);
        }
      } else if (c == '"') {
        quoted = true;
      } else if (c == ',') {
        record.add(field.toString());
        field.setLength(0);
      } else if (c == '\n') {
        record.add(field.toString());
        field.setLength(0);
        records.add(record);
        record = new ArrayList<>();
      } else {
        field.append(c);
      }
    }
    if (quoted || field.length() > 0 || !record.isEmpty()) {
      throw new AssertionError("CSV text does not end with a complete line: " + text);
    }
    return records;
  }

  /** Parses CSV output without quoted fields into rows of fields. */
  static List<String[]> csvRows(String text) {
    List<String[]> rows = new ArrayList<>();
    for (String line : text.split("\n")) {
      if (!line.isEmpty()) {
        rows.add(line.split(",", -1));
      }
    }
    return rows;
  }
}
