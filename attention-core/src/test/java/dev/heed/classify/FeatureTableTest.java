package dev.heed.classify;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.EdgeListFileBuilder;
import dev.heed.graph.EdgeListResult;
import dev.heed.graph.NodeIndex;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyFormatException;
import dev.heed.npy.Npz;
import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Collections;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Feature rows matched to graph nodes by id, from memory and from .npz and .npy + ids files. */
class FeatureTableTest {

  @TempDir Path dir;

  /** A graph whose ids appear in an order unrelated to their sorted order. */
  private EdgeListResult<String> graph() throws IOException {
    Path edges = Files.writeString(dir.resolve("g.csv"), "30,10\n10,20\n40,30\n20,40\n");
    return EdgeListFileBuilder.stringIds(edges).build(); // node order: 30, 10, 40, 20
  }

  private static float[] row(long id, int f) {
    SplittableRandom random = new SplittableRandom(id);
    float[] r = new float[f];
    for (int k = 0; k < f; k++) {
      r[k] = (float) random.nextGaussian();
    }
    return r;
  }

  /** Rows in the given id order, each row a function of its id. */
  private static NodeFeatures rowsFor(List<Long> ids, int f) {
    float[][] rows = new float[ids.size()][];
    for (int r = 0; r < rows.length; r++) {
      rows[r] = row(ids.get(r), f);
    }
    return NodeFeatures.of(rows);
  }

  private static void assertRowsFollowIds(NodeFeatures aligned, NodeIndex<String> nodes, int f) {
    float[] got = new float[f];
    for (int i = 0; i < nodes.size(); i++) {
      aligned.copyRow(i, got, 0);
      assertArrayEquals(row(Long.parseLong(nodes.idOf(i)), f), got, "node " + nodes.idOf(i));
    }
  }

  @Test
  void rowsInAnyOrderAreAlignedToTheGraphsNodes() throws IOException {
    EdgeListResult<String> g = graph();
    List<Long> sorted = List.of(10L, 20L, 30L, 40L);
    List<Long> shuffled = new ArrayList<>(sorted);
    Collections.shuffle(shuffled, new java.util.Random(3));
    for (List<Long> order : List.of(sorted, shuffled)) {
      List<String> ids = order.stream().map(String::valueOf).toList();
      NodeFeatures aligned = NodeFeatures.byId(g.nodes(), ids, rowsFor(order, 3));
      assertEquals(4, aligned.nodeCount());
      assertRowsFollowIds(aligned, g.nodes(), 3);
    }
  }

  @Test
  void missingExtraAndRepeatedIdsAreNamedAndCounted() throws IOException {
    EdgeListResult<String> g = graph();
    IllegalArgumentException missing =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                NodeFeatures.byId(
                    g.nodes(), List.of("10", "20", "99"), rowsFor(List.of(10L, 20L, 99L), 2)));
    assertTrue(
        missing.getMessage().contains("2 of the 4 nodes have no row ('30', '40')"),
        missing.getMessage());
    assertTrue(
        missing.getMessage().contains("1 of the 3 rows have an id that is not a node ('99')"),
        missing.getMessage());
    IllegalArgumentException twice =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                NodeFeatures.byId(
                    g.nodes(),
                    List.of("10", "20", "30", "40", "10"),
                    rowsFor(List.of(10L, 20L, 30L, 40L, 10L), 2)));
    assertTrue(
        twice.getMessage().contains("id '10' has two feature rows (0 and 4)"), twice.getMessage());
    assertThrows(
        IllegalArgumentException.class,
        () -> NodeFeatures.byId(g.nodes(), List.of("10"), rowsFor(List.of(10L, 20L), 2)));
    FeatureTable<String> withExtra =
        FeatureTable.of(List.of("40", "x", "10", "y"), rowsFor(List.of(40L, 1L, 10L, 2L), 2));
    assertEquals(List.of("x", "y"), withExtra.idsNotIn(g.nodes()));
  }

  @Test
  void npzWithIdsRoundTripsAndAligns() throws IOException {
    EdgeListResult<String> g = graph();
    List<Long> order = List.of(40L, 10L, 30L, 20L);
    Path file = dir.resolve("x.npz");
    FeatureTable.writeNpz(FeatureTable.of(order, rowsFor(order, 5)), file);
    FeatureTable<Long> read = FeatureTable.readNpz(file);
    assertEquals(order, read.ids());
    assertRowsFollowIds(read.mapIds(String::valueOf).alignTo(g.nodes()), g.nodes(), 5);

    // int32 ids and float64 features, as numpy.savez may write them
    Path int32 = dir.resolve("i.npz");
    double[] values = new double[4 * 2];
    for (int i = 0; i < values.length; i++) {
      values[i] = i + 0.5;
    }
    Npz.write(
        Map.of(
            FeatureTable.NPZ_FEATURES, NpyArray.ofDoubles(values, 4, 2),
            FeatureTable.NPZ_NODE_IDS, NpyArray.ofInts(new int[] {20, 40, 10, 30}, 4)),
        int32);
    NodeFeatures aligned = FeatureTable.readNpz(int32).mapIds(String::valueOf).alignTo(g.nodes());
    assertEquals(0.5f, aligned.value(g.nodes().indexOf("20"), 0));
    assertEquals(7.5f, aligned.value(g.nodes().indexOf("30"), 1));

    Path noIds = dir.resolve("n.npz");
    Npz.write(Map.of("features", NpyArray.ofDoubles(values, 4, 2)), noIds);
    NpyFormatException ex =
        assertThrows(NpyFormatException.class, () -> FeatureTable.readNpz(noIds));
    assertTrue(ex.getMessage().contains("'node_ids'"), ex.getMessage());
    Path wrongLength = dir.resolve("w.npz");
    Npz.write(
        Map.of(
            "features", NpyArray.ofDoubles(values, 4, 2),
            "node_ids", NpyArray.ofLongs(new long[] {1, 2, 3}, 3)),
        wrongLength);
    assertTrue(
        assertThrows(NpyFormatException.class, () -> FeatureTable.readNpz(wrongLength))
            .getMessage()
            .contains("one id per feature row (4)"));
  }

  @Test
  void npyWithAnIdsFileRoundTripsAndAligns() throws IOException {
    EdgeListResult<String> g = graph();
    List<Long> order = List.of(20L, 30L, 10L, 40L);
    FeatureTable<Long> table = FeatureTable.of(order, rowsFor(order, 4));
    Path npy = dir.resolve("x.npy");
    Path ids = dir.resolve("x.ids");
    table.writeNpy(npy, ids);
    assertRowsFollowIds(FeatureTable.readNpy(npy, ids).alignTo(g.nodes()), g.nodes(), 4);

    // CRLF, a byte order mark and a quoted id are read as written
    Files.write(ids, "\uFEFF20\r\n\"30\"\r\n10\r\n 40 \r\n".getBytes(StandardCharsets.UTF_8));
    assertEquals(List.of("20", "30", "10", "40"), FeatureTable.readNpy(npy, ids).ids());
    Files.writeString(ids, "20\n30\n10\n");
    IOException shortIds = assertThrows(IOException.class, () -> FeatureTable.readNpy(npy, ids));
    assertTrue(
        shortIds.getMessage().contains("3 ids, but x.npy has 4 rows"), shortIds.getMessage());
    Files.writeString(ids, "20\n\n10\n40\n");
    assertTrue(
        assertThrows(IOException.class, () -> FeatureTable.readNpy(npy, ids))
            .getMessage()
            .contains("line 2: empty line"));
  }

  @Test
  void textIdsInAnNpzSayWhereTextIdsGo() throws IOException {
    // numpy.savez(f, features=x, node_ids=numpy.array(["a", "b"])) stores node_ids as '<U1'
    String dict = "{'descr': '<U1', 'fortran_order': False, 'shape': (2,), }";
    int headerLength = 128 - 10;
    StringBuilder header = new StringBuilder(dict);
    while (header.length() < headerLength - 1) {
      header.append(' ');
    }
    header.append('\n');
    java.io.ByteArrayOutputStream npy = new java.io.ByteArrayOutputStream();
    npy.write(new byte[] {(byte) 0x93, 'N', 'U', 'M', 'P', 'Y', 1, 0, (byte) headerLength, 0});
    npy.write(header.toString().getBytes(StandardCharsets.ISO_8859_1));
    npy.write(new byte[] {'a', 0, 0, 0, 'b', 0, 0, 0});
    Path file = dir.resolve("text.npz");
    try (java.util.zip.ZipOutputStream zip =
        new java.util.zip.ZipOutputStream(Files.newOutputStream(file))) {
      zip.putNextEntry(new java.util.zip.ZipEntry("node_ids.npy"));
      zip.write(npy.toByteArray());
      zip.closeEntry();
    }
    NpyFormatException ex =
        assertThrows(NpyFormatException.class, () -> FeatureTable.readNpz(file));
    assertTrue(ex.getMessage().contains("'<U1'"), ex.getMessage());
    assertTrue(ex.getMessage().contains("save the features as .npy and the ids"), ex.getMessage());
  }

  @Test
  void positionalRowsAreIdsZeroToNMinusOne() {
    FeatureTable<Long> t = FeatureTable.positional(rowsFor(List.of(0L, 1L, 2L), 2));
    assertEquals(List.of(0L, 1L, 2L), t.ids());
  }
}
