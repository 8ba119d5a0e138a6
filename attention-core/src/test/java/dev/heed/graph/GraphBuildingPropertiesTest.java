package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import net.jqwik.api.Arbitrary;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;

/**
 * Properties of graph building (jqwik) over the edge lists of {@link GraphArbitraries} (random, and
 * the degenerate shapes random lists rarely hit), checked against {@link NaiveCsr}, a sorted set
 * per row filled straight from the policies' definitions.
 */
class GraphBuildingPropertiesTest {

  @Provide
  Arbitrary<GraphArbitraries.EdgeList> edgeLists() {
    return GraphArbitraries.edgeLists(40);
  }

  /**
   * The builder's graph is the policies' definition (NaiveCsr), or, under REJECT, a refusal exactly
   * when the list repeats an edge. Source: the policies' Javadoc ({@link SelfLoopPolicy}, {@link
   * DirectionPolicy}, {@link DuplicatePolicy}).
   */
  @Property(tries = 300)
  void builderMatchesTheDefinitionUnderEveryPolicy(
      @ForAll("edgeLists") GraphArbitraries.EdgeList e,
      @ForAll SelfLoopPolicy selfLoops,
      @ForAll DirectionPolicy direction,
      @ForAll DuplicatePolicy duplicates) {
    CsrGraphBuilder builder =
        CsrGraphBuilder.fromEdges(e.sources(), e.targets(), e.n())
            .selfLoops(selfLoops)
            .direction(direction)
            .duplicates(duplicates);
    // a self-loop given once is no repeat under ADD (CsrGraphBuilderTest documents it)
    if (duplicates == DuplicatePolicy.REJECT
        && NaiveCsr.hasDuplicate(e.sources(), e.targets(), direction)) {
      IllegalArgumentException x = assertThrows(IllegalArgumentException.class, builder::build);
      assertTrue(x.getMessage().contains("edge"), x.getMessage());
      return;
    }
    CsrGraph graph = builder.build();
    assertEquals(NaiveCsr.build(e.sources(), e.targets(), e.n(), selfLoops, direction), graph);
  }

  /**
   * CSR invariants (common practice for CSR: offsets start at 0, never decrease, end at E; columns
   * in range), plus Heed's own: each row sorted and free of repeats.
   */
  @Property(tries = 200)
  void everyBuiltGraphIsAValidSortedCsr(
      @ForAll("edgeLists") GraphArbitraries.EdgeList e, @ForAll DirectionPolicy direction) {
    CsrGraph graph =
        CsrGraphBuilder.fromEdges(e.sources(), e.targets(), e.n()).direction(direction).build();
    int[] offsets = graph.rowOffsets();
    int[] columns = graph.columns();
    assertEquals(e.n(), graph.nodeCount());
    assertEquals(0, offsets[0]);
    for (int i = 0; i < e.n(); i++) {
      assertTrue(offsets[i] <= offsets[i + 1]);
      assertEquals(offsets[i + 1] - offsets[i], graph.degree(i));
      for (int k = offsets[i]; k < offsets[i + 1]; k++) {
        assertTrue(columns[k] >= 0 && columns[k] < e.n());
        if (k > offsets[i]) {
          assertTrue(columns[k - 1] < columns[k], "row " + i + " not strictly increasing");
        }
      }
      assertTrue(graph.allows(i, i), "SelfLoopPolicy.ADD gives every node its self-loop");
    }
    assertEquals(graph.entryCount(), offsets[e.n()]);
  }
}
