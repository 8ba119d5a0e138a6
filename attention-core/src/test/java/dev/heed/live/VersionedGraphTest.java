package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import org.junit.jupiter.api.Test;

/** The live graph's conventions, versions, change reports, features and compaction. */
class VersionedGraphTest {

  private static final float[] ONE = {1f, 2f};
  private static final float[] TWO = {3f, -4f};

  private static int[] row(LiveSnapshot<?> snapshot, int target) {
    int[] row = new int[snapshot.degree(target)];
    assertEquals(row.length, snapshot.copyRow(target, row, 0));
    return row;
  }

  @Test
  void gatPolicyByDefault() {
    try (VersionedGraph<String> graph =
        VersionedGraph.builder(2).backgroundCompaction(false).build()) {
      BatchResult result =
          graph.apply(graph.newBatch().addNode("a", ONE).addNode("b", TWO).addEdge("a", "b"));
      assertEquals(1, result.version());
      assertArrayEquals(new int[] {0, 1}, result.changedNodes());
      assertEquals(2, result.nodesAdded());
      assertEquals(3, result.entriesAdded()); // two self-loops and a -> b
      LiveSnapshot<String> now = graph.snapshot();
      assertEquals(1, now.version());
      assertArrayEquals(new int[] {0}, row(now, 0));
      assertArrayEquals(new int[] {0, 1}, row(now, 1)); // b attends to a and itself
      assertTrue(now.hasEdge(0, 1));
      assertFalse(now.hasEdge(1, 0));
      assertEquals(3, now.edgeCount());
      assertEquals("b", now.nodes().idOf(1));
      assertEquals(0, now.nodes().indexOf("a"));
      CsrGraph expected =
          CsrGraphBuilder.fromEdges(new int[] {0}, new int[] {1}, 2)
              .selfLoops(SelfLoopPolicy.ADD)
              .build();
      assertEquals(expected, now.toIndexedGraph().graph());
    }
  }

  @Test
  void symmetriseAddsAndRemovesBothDirections() {
    try (VersionedGraph<Long> graph =
        VersionedGraph.builder(2)
            .direction(DirectionPolicy.SYMMETRISE)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .backgroundCompaction(false)
            .build()) {
      graph.apply(graph.newBatch().addNode(10L, ONE).addNode(20L, TWO).addNode(30L, ONE));
      BatchResult added = graph.apply(graph.newBatch().addEdge(10L, 20L).addEdge(30L, 30L));
      assertArrayEquals(new int[] {0, 1, 2}, added.changedRows());
      assertEquals(3, added.entriesAdded());
      LiveSnapshot<Long> afterAdd = graph.snapshot();
      assertArrayEquals(new int[] {1}, row(afterAdd, 0));
      assertArrayEquals(new int[] {0}, row(afterAdd, 1));
      assertArrayEquals(new int[] {2}, row(afterAdd, 2));
      BatchResult removed = graph.apply(graph.newBatch().removeEdge(20L, 10L));
      assertArrayEquals(new int[] {0, 1}, removed.changedRows());
      assertEquals(2, removed.entriesRemoved());
      assertEquals(0, graph.snapshot().degree(0));
      assertEquals(0, graph.snapshot().degree(1));
      // the older snapshot still answers for its own version
      assertArrayEquals(new int[] {1}, row(afterAdd, 0));
    }
  }

  @Test
  void duplicatesMergeOrRefuse() {
    try (VersionedGraph<String> merging =
        VersionedGraph.builder(2).backgroundCompaction(false).build()) {
      merging.apply(merging.newBatch().addNode("a", ONE).addNode("b", ONE).addEdge("a", "b"));
      BatchResult again = merging.apply(merging.newBatch().addEdge("a", "b").addEdge("b", "b"));
      assertEquals(2, again.version());
      assertEquals(0, again.changedNodeCount());
      assertEquals(3, merging.snapshot().edgeCount());
    }
    try (VersionedGraph<String> rejecting =
        VersionedGraph.builder(2)
            .duplicates(DuplicatePolicy.REJECT)
            .direction(DirectionPolicy.SYMMETRISE)
            .backgroundCompaction(false)
            .build()) {
      rejecting.apply(rejecting.newBatch().addNode("a", ONE).addNode("b", ONE).addEdge("a", "b"));
      RejectedUpdateException e =
          assertThrows(
              RejectedUpdateException.class,
              () -> rejecting.apply(rejecting.newBatch().addNode("c", ONE).addEdge("b", "a")));
      assertEquals(1, e.operation());
      assertTrue(e.getMessage().contains("duplicate undirected edge {'b', 'a'}"), e.getMessage());
      assertTrue(e.getMessage().contains("DuplicatePolicy.MERGE"), e.getMessage());
      assertEquals(1, rejecting.snapshot().version());
      assertEquals(2, rejecting.snapshot().nodeCount()); // "c" was not added
      assertEquals(-1, rejecting.snapshot().nodes().indexOf("c"));
    }
  }

  @Test
  void addingAndRemovingWithinABatchIsNoChange() {
    try (VersionedGraph<String> graph =
        VersionedGraph.builder(2).backgroundCompaction(false).build()) {
      graph.apply(graph.newBatch().addNode("a", ONE).addNode("b", ONE));
      BatchResult result =
          graph.apply(
              graph.newBatch().addEdge("a", "b").removeEdge("a", "b").setFeatures("a", ONE));
      assertEquals(0, result.changedNodeCount());
      assertEquals(1, result.entriesAdded());
      assertEquals(1, result.entriesRemoved());
      BatchResult features = graph.apply(graph.newBatch().setFeatures("b", TWO));
      assertArrayEquals(new int[] {1}, features.changedFeatures());
      assertArrayEquals(new int[0], features.changedRows());
    }
  }

  @Test
  void missingFeaturesAreReportedBeforeScoring() {
    try (VersionedGraph<String> graph =
        VersionedGraph.builder(2).backgroundCompaction(false).build()) {
      graph.apply(graph.newBatch().addNode("a", ONE).addNode("late").addEdge("late", "a"));
      LiveSnapshot<String> now = graph.snapshot();
      assertEquals(1, now.missingFeatureCount());
      assertTrue(now.hasFeatures(0));
      assertFalse(now.hasFeatures(1));
      MissingFeaturesException e =
          assertThrows(MissingFeaturesException.class, () -> now.copyRow(1, new float[2], 0));
      assertEquals(1, e.node());
      assertTrue(e.getMessage().contains("'late'"), e.getMessage());
      assertTrue(e.getMessage().contains("setFeatures"), e.getMessage());
      assertThrows(MissingFeaturesException.class, now::compacted);
      assertEquals(2, now.toIndexedGraph().graph().nodeCount()); // the graph alone is fine
      // compaction keeps the missing row missing
      LiveSnapshot<String> compacted = graph.compact();
      assertFalse(compacted.hasFeatures(1));
      assertEquals(1, compacted.missingFeatureCount());
      BatchResult set = graph.apply(graph.newBatch().setFeatures("late", TWO));
      assertArrayEquals(new int[] {1}, set.changedFeatures());
      assertEquals(0, graph.snapshot().missingFeatureCount());
      float[] into = new float[3];
      graph.snapshot().copyRow(1, into, 1);
      assertArrayEquals(new float[] {0f, 3f, -4f}, into);
      CompactedSnapshot<String> full = graph.snapshot().compacted();
      assertEquals(-4f, full.features().value(1, 1));
      assertEquals(1f, full.features().value(0, 0));
      assertEquals("late", full.nodes().idOf(1));
    }
  }

  @Test
  void compactionKeepsVersionAndContentAndOldSnapshots() {
    try (VersionedGraph<Integer> graph =
        VersionedGraph.builder(2).backgroundCompaction(false).build()) {
      UpdateBatch<Integer> nodes = graph.newBatch();
      for (int i = 0; i < 100; i++) {
        nodes.addNode(i, new float[] {i, -i});
      }
      graph.apply(nodes);
      UpdateBatch<Integer> edges = graph.newBatch();
      for (int i = 0; i < 100; i++) {
        edges.addEdge(i, (i * 7 + 3) % 100).addEdge(i, (i * 13 + 1) % 100);
      }
      graph.apply(edges);
      LiveSnapshot<Integer> before = graph.snapshot();
      assertFalse(before.isCompact());
      assertTrue(before.memory().deltaBytes() > 0);
      CsrGraph expected = before.toIndexedGraph().graph();
      LiveSnapshot<Integer> after = graph.compact();
      assertSame(after, graph.snapshot());
      assertEquals(before.version(), after.version());
      assertTrue(after.isCompact());
      assertEquals(0, after.memory().deltaBytes());
      assertEquals(expected, after.toIndexedGraph().graph());
      assertSame(after.toIndexedGraph().graph(), after.compacted().graph()); // O(1), no copy
      assertEquals(expected.storageBytes(), after.memory().baseGraphBytes());
      graph.apply(graph.newBatch().removeEdge(0, 3).addEdge(5, 0));
      assertEquals(expected, before.toIndexedGraph().graph()); // the old snapshot is intact
      LiveSnapshot<Integer> changed = graph.snapshot();
      LiveSnapshot<Integer> again = graph.compact();
      assertEquals(3, again.version());
      assertEquals(changed.toIndexedGraph().graph(), again.toIndexedGraph().graph());
      assertSame(again, graph.compact()); // nothing left to fold in
    }
  }
}
