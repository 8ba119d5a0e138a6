package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SavedGraph;
import dev.heed.graph.SavedGraphFile;
import dev.heed.graph.SavedGraphFormatException;
import dev.heed.graph.SelfLoopPolicy;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashSet;
import java.util.List;
import java.util.Set;
import java.util.SplittableRandom;
import java.util.function.Consumer;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * A live graph saved from a snapshot ({@link LiveSnapshot#saveTo}) and restored ({@link
 * VersionedGraph.Builder#restore}) has the same nodes by the same ids and indices, the same rows
 * and features, and a version one past the saved one; later batches change it exactly as they
 * change the graph it was saved from. A torn or damaged file is refused by the reader; a saved
 * graph that breaks the restoring builder's policies is refused with the row named.
 */
class VersionedGraphRestoreTest {

  private static final int FEATURES = 4;

  @TempDir Path dir;

  private static VersionedGraph.Builder builder(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates) {
    return VersionedGraph.builder(FEATURES)
        .selfLoops(selfLoops)
        .direction(direction)
        .duplicates(duplicates)
        .backgroundCompaction(false);
  }

  @ParameterizedTest
  @MethodSource("dev.heed.live.VersionedGraphReferenceTest#policies")
  void aRestoredGraphEqualsTheSavedOneAndTakesTheSameBatches(
      SelfLoopPolicy selfLoops, DirectionPolicy direction, DuplicatePolicy duplicates)
      throws IOException {
    SplittableRandom random =
        new SplittableRandom(
            977L + 31L * selfLoops.ordinal() + 7L * direction.ordinal() + duplicates.ordinal());
    VersionedGraph.Builder builder = builder(selfLoops, direction, duplicates);
    try (VersionedGraph<String> original = builder.build()) {
      Updates updates = new Updates(random, selfLoops);
      original.apply(updates.addNodes(original, 300));
      for (int round = 0; round < 12; round++) {
        original.apply(updates.next(original));
        if (round == 5) {
          original.compact(); // the saved version has a base and deltas over it
        }
      }
      LiveSnapshot<String> saved = original.snapshot();
      assertTrue(saved.edgeCount() > 500, "a graph with edges: " + saved.edgeCount());
      Path file = dir.resolve("live.heedgraph");
      saved.saveTo(file);

      SavedGraph<String> read = SavedGraphFile.readStringIds(file);
      assertEquals(saved.version(), read.version());
      try (VersionedGraph<String> restored = builder.restore(read)) {
        assertEquals(saved.version() + 1, restored.snapshot().version(), "a fresh version");
        assertSameGraph(saved, restored.snapshot());
        // The same batches after the restart change both graphs alike, rows of the base included.
        for (int round = 0; round < 8; round++) {
          Consumer<UpdateBatch<String>> batch = updates.describeNext(original.snapshot());
          UpdateBatch<String> a = original.newBatch();
          UpdateBatch<String> b = restored.newBatch();
          batch.accept(a);
          batch.accept(b);
          BatchResult ra = original.apply(a);
          BatchResult rb = restored.apply(b);
          assertArrayEquals(ra.changedRows(), rb.changedRows(), "round " + round);
          assertArrayEquals(ra.changedFeatures(), rb.changedFeatures(), "round " + round);
          assertEquals(original.snapshot().version() + 1, restored.snapshot().version());
          assertSameGraph(original.snapshot(), restored.snapshot());
        }
        restored.compact();
        assertSameGraph(original.snapshot(), restored.snapshot());
      }
    }
  }

  /** Same ids at the same indices, same rows, same features bit for bit, same entry count. */
  private static void assertSameGraph(LiveSnapshot<String> want, LiveSnapshot<String> got) {
    assertEquals(want.nodeCount(), got.nodeCount());
    assertEquals(want.edgeCount(), got.edgeCount());
    assertEquals(want.missingFeatureCount(), got.missingFeatureCount());
    int[] a = new int[want.nodeCount()];
    int[] b = new int[want.nodeCount()];
    float[] fa = new float[FEATURES];
    float[] fb = new float[FEATURES];
    for (int node = 0; node < want.nodeCount(); node++) {
      String id = want.nodes().idOf(node);
      assertEquals(id, got.nodes().idOf(node), "index " + node);
      assertEquals(node, got.nodes().indexOf(id), id);
      int d = want.degree(node);
      assertEquals(d, got.degree(node), id);
      want.copyRow(node, a, 0);
      got.copyRow(node, b, 0);
      assertArrayEquals(Arrays.copyOf(a, d), Arrays.copyOf(b, d), "row of " + id);
      want.copyRow(node, fa, 0);
      got.copyRow(node, fb, 0);
      assertArrayEquals(fa, fb, "features of " + id);
    }
  }

  /**
   * Seeded random batches that the policies accept: new nodes, edges added and removed, features.
   */
  private static final class Updates {
    private final SplittableRandom random;
    private final SelfLoopPolicy selfLoops;
    private int added;

    Updates(SplittableRandom random, SelfLoopPolicy selfLoops) {
      this.random = random;
      this.selfLoops = selfLoops;
    }

    UpdateBatch<String> addNodes(VersionedGraph<String> graph, int count) {
      UpdateBatch<String> batch = graph.newBatch();
      for (int k = 0; k < count; k++) {
        batch.addNode("node-" + added++, features());
      }
      return batch;
    }

    UpdateBatch<String> next(VersionedGraph<String> graph) {
      UpdateBatch<String> batch = graph.newBatch();
      describeNext(graph.snapshot()).accept(batch);
      return batch;
    }

    /** The next batch against {@code now}, as operations to replay on any graph. */
    Consumer<UpdateBatch<String>> describeNext(LiveSnapshot<String> now) {
      int n = now.nodeCount();
      List<Consumer<UpdateBatch<String>>> ops = new ArrayList<>();
      int fresh = random.nextInt(4);
      for (int k = 0; k < fresh; k++) {
        String id = "node-" + added++;
        float[] x = features();
        ops.add(batch -> batch.addNode(id, x));
      }
      // Edges added: pairs not present and not repeated in the batch (either direction).
      Set<Long> touched = new HashSet<>();
      for (int k = 0; k < 60; k++) {
        int s = random.nextInt(n);
        int t = random.nextInt(n);
        if (s == t || now.hasEdge(s, t) || now.hasEdge(t, s) || !touched.add(pair(s, t))) {
          continue;
        }
        String source = now.nodes().idOf(s);
        String target = now.nodes().idOf(t);
        ops.add(batch -> batch.addEdge(source, target));
      }
      // Edges removed: present entries, one per pair, never a self-loop the policy added.
      for (int k = 0; k < 15; k++) {
        int t = random.nextInt(n);
        int d = now.degree(t);
        if (d == 0) {
          continue;
        }
        int[] row = new int[d];
        now.copyRow(t, row, 0);
        int s = row[random.nextInt(d)];
        boolean policyLoop = s == t && selfLoops == SelfLoopPolicy.ADD;
        if (policyLoop || !touched.add(pair(s, t))) {
          continue;
        }
        String source = now.nodes().idOf(s);
        String target = now.nodes().idOf(t);
        ops.add(batch -> batch.removeEdge(source, target));
      }
      for (int k = 0; k < 10; k++) {
        String id = now.nodes().idOf(random.nextInt(n));
        float[] x = features();
        ops.add(batch -> batch.setFeatures(id, x));
      }
      return batch -> ops.forEach(op -> op.accept(batch));
    }

    private static long pair(int a, int b) {
      return ((long) Math.min(a, b) << 32) | Math.max(a, b);
    }

    private float[] features() {
      float[] x = new float[FEATURES];
      for (int k = 0; k < x.length; k++) {
        x[k] = (float) random.nextGaussian();
      }
      return x;
    }
  }

  @Test
  void aTornOrDamagedSaveIsRefusedWithAMessage() throws IOException {
    VersionedGraph.Builder builder =
        builder(SelfLoopPolicy.ADD, DirectionPolicy.SYMMETRISE, DuplicatePolicy.MERGE);
    try (VersionedGraph<String> graph = builder.build()) {
      Updates updates = new Updates(new SplittableRandom(5), SelfLoopPolicy.ADD);
      graph.apply(updates.addNodes(graph, 100));
      graph.apply(updates.next(graph));
      Path file = dir.resolve("live.heedgraph");
      graph.snapshot().saveTo(file);
      byte[] bytes = Files.readAllBytes(file);
      SplittableRandom random = new SplittableRandom(6);
      for (int cut : new int[] {1, 63, 64, bytes.length / 2, bytes.length - 17, bytes.length - 1}) {
        Path torn = dir.resolve("torn-" + cut + ".heedgraph");
        Files.write(torn, Arrays.copyOf(bytes, cut));
        SavedGraphFormatException e =
            assertThrows(SavedGraphFormatException.class, () -> SavedGraphFile.readStringIds(torn));
        assertTrue(
            e.getMessage().contains("truncated")
                || e.getMessage().contains("shorter than a header"),
            "cut at " + cut + ": " + e.getMessage());
        assertTrue(e.getMessage().contains(torn.toString()), e.getMessage());
      }
      for (int k = 0; k < 20; k++) {
        byte[] damaged = bytes.clone();
        int at = random.nextInt(damaged.length);
        damaged[at] ^= (byte) (1 + random.nextInt(255));
        Path bad = dir.resolve("damaged-" + at + ".heedgraph");
        Files.write(bad, damaged);
        SavedGraphFormatException e =
            assertThrows(SavedGraphFormatException.class, () -> SavedGraphFile.readStringIds(bad));
        assertTrue(e.getMessage().contains(bad.toString()), e.getMessage());
      }
      // The intact file still restores.
      try (VersionedGraph<String> restored = builder.restore(SavedGraphFile.readStringIds(file))) {
        assertSameGraph(graph.snapshot(), restored.snapshot());
      }
    }
  }

  @Test
  void rowsThatBreakTheRestoringPoliciesAreRefused() throws IOException {
    Path file = dir.resolve("directed.heedgraph");
    try (VersionedGraph<String> directed =
        builder(SelfLoopPolicy.AS_GIVEN, DirectionPolicy.KEEP, DuplicatePolicy.MERGE).build()) {
      float[] x = {1, 2, 3, 4};
      directed.apply(directed.newBatch().addNode("a", x).addNode("b", x).addEdge("a", "b"));
      directed.snapshot().saveTo(file);
    }
    SavedGraph<String> saved = SavedGraphFile.readStringIds(file);
    IllegalArgumentException symmetric =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                builder(SelfLoopPolicy.AS_GIVEN, DirectionPolicy.SYMMETRISE, DuplicatePolicy.MERGE)
                    .restore(saved));
    assertTrue(symmetric.getMessage().contains("not symmetric"), symmetric.getMessage());
    assertTrue(symmetric.getMessage().contains("node b attends to a"), symmetric.getMessage());
    IllegalArgumentException loops =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                builder(SelfLoopPolicy.ADD, DirectionPolicy.KEEP, DuplicatePolicy.MERGE)
                    .restore(saved));
    assertTrue(loops.getMessage().contains("has no self-loop"), loops.getMessage());
    IllegalArgumentException width =
        assertThrows(
            IllegalArgumentException.class,
            () -> VersionedGraph.builder(FEATURES + 1).restore(saved));
    assertTrue(width.getMessage().contains("has 4 features per node"), width.getMessage());
  }

  @Test
  void aGraphWithANodeWithoutFeaturesCannotBeSaved() {
    try (VersionedGraph<String> graph =
        builder(SelfLoopPolicy.ADD, DirectionPolicy.KEEP, DuplicatePolicy.MERGE).build()) {
      graph.apply(graph.newBatch().addNode("a", new float[] {1, 2, 3, 4}).addNode("b"));
      Path file = dir.resolve("incomplete.heedgraph");
      MissingFeaturesException e =
          assertThrows(MissingFeaturesException.class, () -> graph.snapshot().saveTo(file));
      assertTrue(e.getMessage().contains("b"), e.getMessage());
      assertTrue(Files.notExists(file), "nothing written");
    }
  }
}
