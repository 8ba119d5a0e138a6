package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import org.junit.jupiter.api.Test;

/** Setting the conventions at once builds what the three policies build one by one. */
class GraphPoliciesTest {

  private static final int[] SOURCES = {0, 1, 1, 2};
  private static final int[] TARGETS = {1, 2, 2, 0};

  @Test
  void conventionsSetAllThreePolicies() {
    for (DirectionPolicy d : DirectionPolicy.values()) {
      for (SelfLoopPolicy l : SelfLoopPolicy.values()) {
        GraphPolicies c = new GraphPolicies(d, l, DuplicatePolicy.MERGE);
        CsrGraph once = CsrGraphBuilder.fromEdges(SOURCES, TARGETS, 3).policies(c).build();
        CsrGraph each =
            CsrGraphBuilder.fromEdges(SOURCES, TARGETS, 3)
                .direction(d)
                .selfLoops(l)
                .duplicates(DuplicatePolicy.MERGE)
                .build();
        assertEquals(each, once, c.toString());
      }
    }
    assertNotEquals(
        CsrGraphBuilder.fromEdges(SOURCES, TARGETS, 3)
            .policies(GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS)
            .build(),
        CsrGraphBuilder.fromEdges(SOURCES, TARGETS, 3).build());
    IllegalArgumentException rejected =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                CsrGraphBuilder.fromEdges(SOURCES, TARGETS, 3)
                    .policies(
                        new GraphPolicies(
                            DirectionPolicy.KEEP, SelfLoopPolicy.AS_GIVEN, DuplicatePolicy.REJECT))
                    .build());
    assertTrue(rejected.getMessage().contains("1"), rejected.getMessage());
  }

  @Test
  void wordsReadBack() {
    assertEquals(SelfLoopPolicy.AS_GIVEN, GraphPolicies.policy(SelfLoopPolicy.class, "as-given"));
    assertEquals("as-given", GraphPolicies.word(SelfLoopPolicy.AS_GIVEN));
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () -> GraphPolicies.policy(DuplicatePolicy.class, "drop"));
    assertEquals("'drop' is not one of [merge, reject]", e.getMessage());
  }
}
