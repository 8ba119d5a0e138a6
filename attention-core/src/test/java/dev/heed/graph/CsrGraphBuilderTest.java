package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

class CsrGraphBuilderTest {

  private static final SelfLoopPolicy[] LOOPS = SelfLoopPolicy.values();
  private static final DirectionPolicy[] DIRECTIONS = DirectionPolicy.values();

  @Test
  void javadocExample() {
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(new int[] {0, 1, 2}, new int[] {1, 2, 0}, 3)
            .selfLoops(SelfLoopPolicy.ADD)
            .direction(DirectionPolicy.KEEP)
            .duplicates(DuplicatePolicy.REJECT)
            .build();
    assertArrayEquals(new int[] {0, 2, 4, 6}, graph.rowOffsets());
    // node i attends to j for an edge j -> i, and to itself (GAT convention)
    assertArrayEquals(new int[] {0, 2, 0, 1, 1, 2}, graph.columns());
  }

  @Test
  void defaultsAreTheDocumentedConstants() {
    assertEquals(SelfLoopPolicy.ADD, CsrGraphBuilder.DEFAULT_SELF_LOOPS);
    assertEquals(DirectionPolicy.KEEP, CsrGraphBuilder.DEFAULT_DIRECTION);
    assertEquals(DuplicatePolicy.MERGE, CsrGraphBuilder.DEFAULT_DUPLICATES);
    CsrGraph graph = CsrGraphBuilder.fromEdges(new int[] {0, 0}, new int[] {1, 1}, 2).build();
    assertEquals(
        CsrGraphBuilder.fromEdges(new int[] {0, 0}, new int[] {1, 1}, 2)
            .selfLoops(SelfLoopPolicy.ADD)
            .direction(DirectionPolicy.KEEP)
            .duplicates(DuplicatePolicy.MERGE)
            .build(),
        graph);
  }

  /** Property: every policy combination equals the plain sorted-set reference, on random graphs. */
  @Test
  void matchesReferenceOnRandomGraphsForEveryPolicy() {
    for (int trial = 0; trial < 60; trial++) {
      long seed = 1000 + trial;
      SplittableRandom random = new SplittableRandom(seed);
      int n = 1 + random.nextInt(trial < 40 ? 30 : 3000);
      int e = random.nextInt(4 * n + 1);
      int[] s = new int[e];
      int[] t = new int[e];
      for (int k = 0; k < e; k++) {
        s[k] = random.nextInt(n);
        t[k] = random.nextInt(n);
      }
      int[] sCopy = s.clone();
      int[] tCopy = t.clone();
      for (SelfLoopPolicy loops : LOOPS) {
        for (DirectionPolicy direction : DIRECTIONS) {
          String where = "seed " + seed + ", " + loops + ", " + direction;
          CsrGraph expected = NaiveCsr.build(s, t, n, loops, direction);
          CsrGraph merged =
              CsrGraphBuilder.fromEdges(s, t, n).selfLoops(loops).direction(direction).build();
          assertEquals(expected, merged, where);
          CsrGraphBuilder rejecting =
              CsrGraphBuilder.fromEdges(s, t, n)
                  .selfLoops(loops)
                  .direction(direction)
                  .duplicates(DuplicatePolicy.REJECT);
          if (NaiveCsr.hasDuplicate(s, t, direction)) {
            assertThrows(IllegalArgumentException.class, rejecting::build, where);
          } else {
            assertEquals(expected, rejecting.build(), where);
          }
        }
      }
      assertArrayEquals(sCopy, s, "inputs must not be modified, seed " + seed);
      assertArrayEquals(tCopy, t, "inputs must not be modified, seed " + seed);
    }
  }

  /** Long rows take the radix-sort path (more than 48 entries, several 8-bit digits). */
  @Test
  void longRowsInRandomOrderAreSortedByRadixPath() {
    long seed = 77;
    SplittableRandom random = new SplittableRandom(seed);
    int n = 200_000; // 18 bits: three 8-bit digit passes
    int e = 100_000;
    int[] s = new int[e];
    int[] t = new int[e];
    for (int k = 0; k < e; k++) {
      s[k] = random.nextInt(n);
      t[k] = random.nextInt(3); // three rows of ~33k entries each
    }
    for (DirectionPolicy direction : DIRECTIONS) {
      CsrGraph expected = NaiveCsr.build(s, t, n, SelfLoopPolicy.ADD, direction);
      assertEquals(
          expected,
          CsrGraphBuilder.fromEdges(s, t, n).direction(direction).build(),
          "seed " + seed + ", " + direction);
    }
  }

  @Test
  void selfLoopsAlreadyPresentAreKeptOnce() {
    // 1 -> 1 given once: ADD keeps a single self-loop, and REJECT does not count it as a repeat
    int[] s = {1, 0};
    int[] t = {1, 1};
    for (DuplicatePolicy dup : DuplicatePolicy.values()) {
      CsrGraph g = CsrGraphBuilder.fromEdges(s, t, 2).duplicates(dup).build();
      assertArrayEquals(new int[] {0, 1, 3}, g.rowOffsets(), dup.toString());
      assertArrayEquals(new int[] {0, 0, 1}, g.columns(), dup.toString());
    }
    CsrGraph asGiven =
        CsrGraphBuilder.fromEdges(s, t, 2).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    assertArrayEquals(new int[] {0, 0, 2}, asGiven.rowOffsets());
    // a self-loop given twice is a duplicate under REJECT, with or without ADD
    for (SelfLoopPolicy loops : LOOPS) {
      IllegalArgumentException ex =
          assertThrows(
              IllegalArgumentException.class,
              () ->
                  CsrGraphBuilder.fromEdges(new int[] {1, 1}, new int[] {1, 1}, 2)
                      .selfLoops(loops)
                      .duplicates(DuplicatePolicy.REJECT)
                      .build());
      assertTrue(ex.getMessage().contains("edge 1 -> 1"), ex.getMessage());
    }
  }

  @Test
  void rejectedDuplicateNamesTheEdgeAndBothIndices() {
    int[] s = {0, 2, 3, 2};
    int[] t = {1, 1, 1, 1};
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraphBuilder.fromEdges(s, t, 4).duplicates(DuplicatePolicy.REJECT).build());
    assertTrue(ex.getMessage().contains("duplicate edge 2 -> 1"), ex.getMessage());
    assertTrue(ex.getMessage().contains("sources[1]/targets[1]"), ex.getMessage());
    assertTrue(ex.getMessage().contains("sources[3]/targets[3]"), ex.getMessage());
  }

  @Test
  void symmetrisedReverseEdgeIsTheSameUndirectedTie() {
    int[] s = {0, 1};
    int[] t = {1, 0};
    CsrGraph merged =
        CsrGraphBuilder.fromEdges(s, t, 2)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .direction(DirectionPolicy.SYMMETRISE)
            .build();
    assertArrayEquals(new int[] {1, 0}, merged.columns());
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                CsrGraphBuilder.fromEdges(s, t, 2)
                    .direction(DirectionPolicy.SYMMETRISE)
                    .duplicates(DuplicatePolicy.REJECT)
                    .build());
    assertTrue(ex.getMessage().contains("undirected edge"), ex.getMessage());
    assertTrue(ex.getMessage().contains("sources[0]/targets[0]"), ex.getMessage());
    assertTrue(ex.getMessage().contains("sources[1]/targets[1]"), ex.getMessage());
  }

  @Test
  void validationErrorsNameArrayIndexAndValue() {
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraphBuilder.fromEdges(new int[] {0, 5}, new int[] {1, 1}, 3).build());
    assertTrue(ex.getMessage().contains("sources[1] = 5"), ex.getMessage());
    ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraphBuilder.fromEdges(new int[] {0}, new int[] {-2}, 3).build());
    assertTrue(ex.getMessage().contains("targets[0] = -2"), ex.getMessage());
    ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraphBuilder.fromEdges(new int[] {0}, new int[] {1, 2}, 3));
    assertTrue(ex.getMessage().contains("1 != 2"), ex.getMessage());
    ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraphBuilder.fromEdges(new int[0], new int[0], -1));
    assertTrue(ex.getMessage().contains("-1"), ex.getMessage());
    assertThrows(NullPointerException.class, () -> CsrGraphBuilder.fromEdges(null, new int[0], 1));
    assertThrows(
        NullPointerException.class,
        () -> CsrGraphBuilder.fromEdges(new int[0], new int[0], 1).selfLoops(null));
  }

  @Test
  void emptyInputs() {
    CsrGraph none = CsrGraphBuilder.fromEdges(new int[0], new int[0], 0).build();
    assertEquals(0, none.nodeCount());
    assertEquals(0, none.edgeCount());
    CsrGraph loopsOnly = CsrGraphBuilder.fromEdges(new int[0], new int[0], 3).build();
    assertArrayEquals(new int[] {0, 1, 2}, loopsOnly.columns());
  }

  /** Existing CsrGraph.of validation (Saad §3.4 invariants) names row, index and value. */
  @Test
  void csrValidationMessagesNameRowIndexAndValue() {
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> CsrGraph.of(new int[] {0, 2, 3}, new int[] {1, 1, 0}));
    assertTrue(ex.getMessage().contains("row 0"), ex.getMessage());
    assertTrue(ex.getMessage().contains("duplicate"), ex.getMessage());
    ex =
        assertThrows(
            IllegalArgumentException.class, () -> CsrGraph.of(new int[] {0, 1}, new int[] {4}));
    assertTrue(ex.getMessage().contains("columns[0] = 4"), ex.getMessage());
  }

  /** A graph that keeps an unused column tail behaves exactly like an exactly sized one. */
  @Test
  void unusedColumnTailIsInvisible() {
    // 20 edges, 2 of them repeats: the merged tail (2 + overlap) stays under 1/8 of 23 entries
    int n = 5;
    int[] s = new int[20];
    int[] t = new int[20];
    int k = 0;
    for (int a = 0; a < n && k < 18; a++) {
      for (int b = 0; b < n && k < 18; b++) {
        if (a != b) {
          s[k] = a;
          t[k++] = b;
        }
      }
    }
    s[18] = s[0];
    t[18] = t[0];
    s[19] = s[1];
    t[19] = t[1];
    CsrGraph built = CsrGraphBuilder.fromEdges(s, t, n).build();
    CsrGraph exact = CsrGraph.of(built.rowOffsets(), built.columns());
    assertEquals(18 + n, built.edgeCount());
    assertEquals(built.edgeCount(), built.columns().length);
    assertTrue(built.storageBytes() > exact.storageBytes(), "the tail is kept, not copied");
    assertEquals(exact, built);
    assertEquals(built, exact);
    assertEquals(exact.hashCode(), built.hashCode());
    assertEquals(exact.toString(), built.toString());
    assertEquals(NaiveCsr.build(s, t, n, SelfLoopPolicy.ADD, DirectionPolicy.KEEP), built);
  }

  /** Every edge given twice: half the entries merge away, so the columns are copied to size. */
  @Test
  void largeMergedTailIsCopiedAway() {
    int[] s = {0, 1, 2, 0, 1, 2};
    int[] t = {1, 2, 0, 1, 2, 0};
    CsrGraph built = CsrGraphBuilder.fromEdges(s, t, 3).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    CsrGraph exact = CsrGraph.of(built.rowOffsets(), built.columns());
    assertEquals(3, built.edgeCount());
    assertEquals(exact.storageBytes(), built.storageBytes());
  }
}
