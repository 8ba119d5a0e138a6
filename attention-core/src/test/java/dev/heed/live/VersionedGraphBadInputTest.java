package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.SelfLoopPolicy;
import java.util.function.Consumer;
import org.junit.jupiter.api.Test;

/** Bad input gets a clear error, and a refused batch leaves the graph exactly as it was. */
class VersionedGraphBadInputTest {

  private static final float[] OK = {0.5f, -1.5f};

  private static VersionedGraph<String> twoNodes() {
    VersionedGraph<String> graph = VersionedGraph.builder(2).backgroundCompaction(false).build();
    graph.apply(graph.newBatch().addNode("a", OK).addNode("b", OK).addEdge("a", "b"));
    return graph;
  }

  /** Applies a batch that must be refused at {@code operation}; checks nothing changed. */
  private static String refused(
      VersionedGraph<String> graph, int operation, Consumer<UpdateBatch<String>> fill) {
    LiveSnapshot<String> before = graph.snapshot();
    UpdateBatch<String> batch = graph.newBatch();
    fill.accept(batch);
    RejectedUpdateException e =
        assertThrows(RejectedUpdateException.class, () -> graph.apply(batch));
    assertEquals(operation, e.operation(), e.getMessage());
    assertSame(before, graph.snapshot(), "a refused batch must not publish anything");
    // nothing was half-applied behind the snapshot either: the next batch sees the old graph
    BatchResult next = graph.apply(graph.newBatch());
    assertEquals(before.version() + 1, next.version());
    assertEquals(before.nodeCount(), graph.snapshot().nodeCount());
    assertEquals(before.edgeCount(), graph.snapshot().edgeCount());
    return e.getMessage();
  }

  @Test
  void unknownIdsNameTheIdAndTheOperation() {
    try (VersionedGraph<String> graph = twoNodes()) {
      String message =
          refused(graph, 2, b -> b.addNode("c", OK).addEdge("c", "a").addEdge("x", "a"));
      assertTrue(message.contains("unknown source id 'x'"), message);
      assertTrue(message.contains("operation 2 of 3 (addEdge)"), message);
      assertTrue(message.contains("addNode first"), message);
      assertEquals(-1, graph.snapshot().nodes().indexOf("c")); // "c" was not kept
      message = refused(graph, 0, b -> b.setFeatures("zz", OK));
      assertTrue(message.contains("unknown node id 'zz'"), message);
      message = refused(graph, 0, b -> b.removeEdge("a", "nobody"));
      assertTrue(message.contains("unknown target id 'nobody'"), message);
      // an edge may not use a node added later in the same batch
      message = refused(graph, 0, b -> b.addEdge("a", "later").addNode("later", OK));
      assertTrue(message.contains("'later'"), message);
    }
  }

  @Test
  void nodesCannotBeAddedTwice() {
    try (VersionedGraph<String> graph = twoNodes()) {
      String message = refused(graph, 0, b -> b.addNode("a"));
      assertTrue(message.contains("node 'a' already exists (index 0)"), message);
      message = refused(graph, 1, b -> b.addNode("c").addNode("c"));
      assertTrue(message.contains("added twice in this batch"), message);
    }
  }

  @Test
  void removingAMissingEdgeIsAnError() {
    try (VersionedGraph<String> graph = twoNodes()) {
      String message = refused(graph, 0, b -> b.removeEdge("b", "a"));
      assertTrue(message.contains("cannot remove edge 'b' -> 'a'"), message);
      message = refused(graph, 1, b -> b.removeEdge("a", "b").removeEdge("a", "b"));
      assertTrue(message.contains("not removed already"), message);
      // the self-loop the policy adds cannot be removed
      message = refused(graph, 0, b -> b.removeEdge("a", "a"));
      assertTrue(message.contains("SelfLoopPolicy.ADD"), message);
    }
    try (VersionedGraph<String> asGiven =
        VersionedGraph.builder(2)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .backgroundCompaction(false)
            .build()) {
      asGiven.apply(asGiven.newBatch().addNode("a", OK));
      String message = refused(asGiven, 0, b -> b.removeEdge("a", "a"));
      assertTrue(message.contains("cannot remove edge 'a' -> 'a'"), message);
    }
  }

  @Test
  void featureRowsAreCheckedWhenRecorded() {
    try (VersionedGraph<String> graph = twoNodes()) {
      UpdateBatch<String> batch = graph.newBatch().addEdge("b", "a");
      IllegalArgumentException wide =
          assertThrows(
              IllegalArgumentException.class, () -> batch.setFeatures("a", new float[] {1, 2, 3}));
      assertTrue(wide.getMessage().contains("must have 2 values"), wide.getMessage());
      assertTrue(wide.getMessage().contains("got 3"), wide.getMessage());
      IllegalArgumentException nan =
          assertThrows(
              IllegalArgumentException.class,
              () -> batch.addNode("c", new float[] {1f, Float.NaN}));
      assertTrue(nan.getMessage().contains("feature 1 of node 'c' is NaN"), nan.getMessage());
      IllegalArgumentException infinite =
          assertThrows(
              IllegalArgumentException.class,
              () -> batch.setFeatures("b", new float[] {Float.NEGATIVE_INFINITY, 0f}));
      assertTrue(infinite.getMessage().contains("-Infinity"), infinite.getMessage());
      assertThrows(NullPointerException.class, () -> batch.addEdge(null, "a"));
      assertThrows(NullPointerException.class, () -> batch.setFeatures("a", null));
      assertEquals(1, batch.size()); // the refused calls recorded nothing
      float[] row = {7f, 8f};
      batch.setFeatures("a", row);
      row[0] = Float.NaN; // the batch copied the row when it was recorded
      graph.apply(batch);
      float[] into = new float[2];
      graph.snapshot().copyRow(0, into, 0);
      assertEquals(7f, into[0]);
    }
  }

  @Test
  void updatesAfterCloseAreRefused() {
    VersionedGraph<String> graph = twoNodes();
    LiveSnapshot<String> last = graph.snapshot();
    UpdateBatch<String> batch = graph.newBatch().addNode("c", OK);
    graph.close();
    graph.close(); // idempotent
    IllegalStateException e = assertThrows(IllegalStateException.class, () -> graph.apply(batch));
    assertTrue(e.getMessage().contains("closed"), e.getMessage());
    assertThrows(IllegalStateException.class, graph::compact);
    assertSame(last, graph.snapshot()); // still readable
    assertEquals(2, graph.snapshot().degree(1));
  }

  @Test
  void batchesBelongToTheirGraph() {
    try (VersionedGraph<String> one = twoNodes();
        VersionedGraph<String> other = twoNodes()) {
      UpdateBatch<String> batch = one.newBatch().addEdge("b", "a");
      IllegalArgumentException e =
          assertThrows(IllegalArgumentException.class, () -> other.apply(batch));
      assertTrue(e.getMessage().contains("another live graph"), e.getMessage());
      assertThrows(IllegalArgumentException.class, () -> VersionedGraph.builder(0));
      assertThrows(
          IllegalArgumentException.class,
          () -> VersionedGraph.builder(2).compactionThreshold(0, 0));
    }
  }

  @Test
  void readsOutOfRangeThrow() {
    try (VersionedGraph<String> graph = twoNodes()) {
      LiveSnapshot<String> now = graph.snapshot();
      assertThrows(IndexOutOfBoundsException.class, () -> now.degree(2));
      assertThrows(IndexOutOfBoundsException.class, () -> now.copyRow(1, new int[1], 0));
      assertThrows(IndexOutOfBoundsException.class, () -> now.copyRow(0, new float[1], 0));
      assertThrows(IndexOutOfBoundsException.class, () -> now.hasEdge(-1, 0));
      assertThrows(IndexOutOfBoundsException.class, () -> now.nodes().idOf(2));
    }
  }
}
