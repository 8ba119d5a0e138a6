package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.FeatureTable;
import dev.heed.classify.NodeFeatures;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * Features matched to nodes by id whatever the file format (CSV, .npy with ids, .npz), a matrix in
 * another order failing or being reordered (never read wrong), and edge lists and features as
 * spreadsheets write them (quotes, headers, extra columns, CRLF, a byte order mark).
 */
class FeatureMatchingIT {

  private static final long SEED = 20261204L;

  @TempDir Path dir;

  /** The fixture graph with its ids replaced: id i becomes {@code idOf(i)}. */
  private static CliFixtures.Data renamed(java.util.function.IntFunction<String> idOf) {
    CliFixtures.Data d = CliFixtures.randomData(40, 60, 5, SEED);
    List<String> ids = new ArrayList<>();
    for (int i = 0; i < d.ids().size(); i++) {
      ids.add(idOf.apply(i));
    }
    List<String[]> edges = new ArrayList<>();
    for (String[] e : d.edges()) {
      edges.add(new String[] {ids.get(d.ids().indexOf(e[0])), ids.get(d.ids().indexOf(e[1]))});
    }
    return new CliFixtures.Data(ids, edges, d.features(), d.seed());
  }

  /** Rows of the fixture's features in the order of {@code ids}. */
  private static NodeFeatures rowsIn(CliFixtures.Data data, List<String> ids) {
    float[][] rows = new float[ids.size()][];
    for (int r = 0; r < rows.length; r++) {
      rows[r] = data.featuresOf(ids.get(r));
    }
    return NodeFeatures.of(rows);
  }

  private CliProcess.Result classify(Path model, Path graph, Path features, String... more)
      throws Exception {
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
    return CliProcess.run(dir, args.toArray(new String[0]));
  }

  private static String ok(CliProcess.Result r) {
    assertEquals(0, r.exitCode(), r.toString());
    assertFalse(r.stderr().contains("Exception"), r.toString());
    return r.stdout();
  }

  @Test
  void csvNpyWithIdsAndNpzGiveIdenticalPredictions() throws Exception {
    // integer ids that are not 0..n-1, named by the edge list in another order than sorted
    CliFixtures.Data data = renamed(i -> Integer.toString(1000 + 7 * i));
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", true);
    String fromCsv = ok(classify(model, graph, data.writeFeaturesCsv(dir.resolve("x.csv"), null)));
    assertEquals(41, fromCsv.lines().count());

    List<String> sorted = data.ids(); // rows sorted by id, not in edge-list order
    FeatureTable<Long> table =
        FeatureTable.of(sorted.stream().map(Long::valueOf).toList(), rowsIn(data, sorted));
    Path npz = dir.resolve("x.npz");
    FeatureTable.writeNpz(table, npz);
    assertEquals(fromCsv, ok(classify(model, graph, npz)), "npz");

    Path beside = dir.resolve("sorted.npy");
    table.writeNpy(beside, dir.resolve("sorted.ids"));
    assertEquals(fromCsv, ok(classify(model, graph, beside)), "npy with sorted.ids beside it");

    Path plain = dir.resolve("plain.npy");
    Npy.write(Npy.read(beside), plain);
    Files.writeString(dir.resolve("row-ids.txt"), String.join("\r\n", sorted) + "\r\n");
    assertEquals(
        fromCsv,
        ok(classify(model, graph, plain, "--feature-ids", dir.resolve("row-ids.txt").toString())),
        "npy with --feature-ids");

    // The same rows without ids: not silently read in node order, but an error that says how.
    CliProcess.Result positional = classify(model, graph, plain);
    assertEquals(HeedCli.EXIT_USER_ERROR, positional.exitCode(), positional.toString());
    assertTrue(
        positional.stderr().contains("40 of the graph's 40 node ids are not row numbers 0..39")
            && positional.stderr().contains("--feature-ids FILE")
            && positional.stderr().contains("plain.ids beside it"),
        positional.toString());
    assertEquals("", positional.stdout());

    // --node-order writes the order classify used; rows in that order with those ids agree.
    Path order = dir.resolve("order.txt");
    assertEquals(fromCsv, ok(classify(model, graph, npz, "--node-order", order.toString())));
    List<String> used = Files.readAllLines(order);
    assertEquals(data.nodeOrder(), used);
    Path inOrder = dir.resolve("in-order.npy");
    FeatureTable.of(used, rowsIn(data, used)).writeNpy(inOrder, dir.resolve("unused.ids"));
    assertEquals(fromCsv, ok(classify(model, graph, inOrder, "--feature-ids", order.toString())));
  }

  @Test
  void npyWithoutIdsIsReadAsRowIEqualsIdIWhenIdsAreRowNumbers() throws Exception {
    CliFixtures.Data data = renamed(i -> Integer.toString(i * 17 % 40)); // ids 0..39, permuted
    Path model = CliFixtures.mixedModel(dir);
    Path graph = data.writeEdges(dir.resolve("g.csv"), ",", false);
    List<String> byNumber = new ArrayList<>();
    for (int i = 0; i < 40; i++) {
      byNumber.add(Integer.toString(i));
    }
    assertNotEquals(byNumber, data.nodeOrder(), "first appearance differs from id order");
    String fromCsv = ok(classify(model, graph, data.writeFeaturesCsv(dir.resolve("x.csv"), null)));
    NodeFeatures byId = rowsIn(data, byNumber); // row i = id i
    Path npy = dir.resolve("x.npy");
    Npy.write(NpyArray.ofFloats(flat(byId), 40, 5), npy);
    assertEquals(fromCsv, ok(classify(model, graph, npy)));
  }

  private static float[] flat(NodeFeatures f) {
    float[] v = new float[f.nodeCount() * f.featureCount()];
    for (int i = 0; i < f.nodeCount(); i++) {
      f.copyRow(i, v, i * f.featureCount());
    }
    return v;
  }

  @Test
  void quotedIdsQuotedHeadersExtraColumnsCrlfAndByteOrderMark() throws Exception {
    CliFixtures.Data data = renamed(i -> String.format(Locale.ROOT, "Client %02d, \"Ltd\"", i));
    Path model = CliFixtures.mixedModel(dir);
    // The reference: tab-separated files, where commas and quotes need no quoting.
    String reference =
        ok(
            classify(
                model,
                data.writeEdges(dir.resolve("g.tsv"), "\t", false),
                writeFeatures(data, dir.resolve("x.tsv"), "\t", false)));
    // A spreadsheet's export: BOM, CRLF, quoted header and ids, payment and amount columns.
    StringBuilder edges = new StringBuilder("\uFEFF\"payment\",\"amount\",\"From\",\"To\"\r\n");
    int k = 0;
    for (String[] e : data.edges()) {
      edges
          .append("p")
          .append(k++)
          .append(",\"1,000.50\",")
          .append(TextFields.quoted(e[0]))
          .append(',')
          .append(TextFields.quoted(e[1]))
          .append("\r\n");
    }
    Path graph = Files.writeString(dir.resolve("payments.csv"), edges, StandardCharsets.UTF_8);
    Path features = writeFeatures(data, dir.resolve("x.csv"), ",", true);
    assertEquals(
        reference,
        ok(classify(model, graph, features, "--source-column", "from", "--target-column", "To")));
    assertEquals(
        reference,
        ok(classify(model, graph, features, "--source-column", "3", "--target-column", "4")));
    assertTrue(reference.contains("\"Client 07, \"\"Ltd\"\"\","), reference);
  }

  /** id then features per line; with quoting, a BOM, CRLF and a quoted header. */
  private static Path writeFeatures(CliFixtures.Data data, Path file, String d, boolean quoted)
      throws IOException {
    StringBuilder s =
        new StringBuilder(quoted ? "\uFEFF\"id\",\"f0\",\"f1\",\"f2\",\"f3\",\"f4\"\r\n" : "");
    for (String id : data.ids()) {
      s.append(quoted ? TextFields.quoted(id) : id);
      for (float v : data.featuresOf(id)) {
        s.append(d).append(Float.toString(v));
      }
      s.append(quoted ? "\r\n" : "\n");
    }
    return Files.writeString(file, s, StandardCharsets.UTF_8);
  }

  @Test
  void misreadGraphFilesNameTheOptionThatReadsThem() throws Exception {
    CliFixtures.Data data = CliFixtures.randomData(40, 60, 5, SEED);
    Path model = CliFixtures.mixedModel(dir);
    Path features = data.writeFeaturesCsv(dir.resolve("x.csv"), null);
    Path semicolons = data.writeEdges(dir.resolve("g.csv"), ";", true);
    assertError(
        classify(model, semicolons, features),
        "g.csv, line 1: expected two fields separated by ',' (CSV), found one: 'source;target'",
        "the line holds ';': use --delimiter ';'");

    Path extra =
        Files.writeString(dir.resolve("e.csv"), "source,target,amount\nacct-001,acct-002,5\n");
    assertError(
        classify(model, extra, features),
        "e.csv, line 2: expected two fields separated by ',' (CSV), found more (3)",
        "--source-column and --target-column, or add --ignore-extra-columns");

    StringBuilder unknownHeader = new StringBuilder("account_from,account_to\n");
    for (String[] e : data.edges()) {
      unknownHeader.append(e[0]).append(',').append(e[1]).append('\n');
    }
    Path header = Files.writeString(dir.resolve("h.csv"), unknownHeader);
    assertError(
        classify(model, header, features),
        "2 of the 42 nodes have no row ('account_from', 'account_to')",
        "if line 1 of h.csv ('account_from', 'account_to') is a header, add --edge-header yes");
    ok(classify(model, header, features, "--edge-header", "yes"));
  }

  private static void assertError(CliProcess.Result r, String... parts) {
    assertEquals(HeedCli.EXIT_USER_ERROR, r.exitCode(), r.toString());
    String first = r.stderr().lines().filter(l -> !l.startsWith("WARNING")).findFirst().orElse("");
    assertTrue(first.startsWith("heed: error: "), r.toString());
    for (String part : parts) {
      assertTrue(first.contains(part), "expected '" + part + "':\n" + r);
    }
  }
}
