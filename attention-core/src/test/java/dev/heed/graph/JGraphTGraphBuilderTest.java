package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.HashSet;
import java.util.List;
import java.util.NoSuchElementException;
import java.util.Set;
import java.util.function.Supplier;
import org.jgrapht.Graph;
import org.jgrapht.generate.BarabasiAlbertGraphGenerator;
import org.jgrapht.generate.CompleteGraphGenerator;
import org.jgrapht.generate.GnpRandomGraphGenerator;
import org.jgrapht.generate.NamedGraphGenerator;
import org.jgrapht.graph.DefaultDirectedGraph;
import org.jgrapht.graph.DefaultEdge;
import org.jgrapht.graph.Multigraph;
import org.jgrapht.graph.Pseudograph;
import org.jgrapht.graph.SimpleGraph;
import org.jgrapht.util.SupplierUtil;
import org.junit.jupiter.api.Test;

class JGraphTGraphBuilderTest {

  private static Graph<Integer, DefaultEdge> undirected() {
    return new SimpleGraph<>(
        SupplierUtil.createIntegerSupplier(), SupplierUtil.DEFAULT_EDGE_SUPPLIER, false);
  }

  private static Graph<Integer, DefaultEdge> directed() {
    return new DefaultDirectedGraph<>(
        SupplierUtil.createIntegerSupplier(), SupplierUtil.DEFAULT_EDGE_SUPPLIER, false);
  }

  /** Directed (source, target) pairs of a JGraphT graph; an undirected edge gives both. */
  private static <V, E> Set<List<V>> directedPairs(Graph<V, E> g) {
    Set<List<V>> pairs = new HashSet<>();
    for (E e : g.edgeSet()) {
      V s = g.getEdgeSource(e);
      V t = g.getEdgeTarget(e);
      pairs.add(List.of(s, t));
      if (g.getType().isUndirected()) {
        pairs.add(List.of(t, s));
      }
    }
    return pairs;
  }

  /** Zachary 1977: 34 members, 78 ties (structure from JGraphT's NamedGraphGenerator). */
  @Test
  void zacharyKarateClub() {
    Graph<Integer, DefaultEdge> karate = undirected();
    new NamedGraphGenerator<Integer, DefaultEdge>().generateZacharyKarateClubGraph(karate);
    assertEquals(34, karate.vertexSet().size()); // Zachary 1977: 34 members
    assertEquals(78, karate.edgeSet().size()); // Zachary 1977: 78 ties

    IndexedGraph<Integer> built =
        JGraphTGraphBuilder.from(karate)
            .selfLoops(SelfLoopPolicy.ADD)
            .direction(DirectionPolicy.SYMMETRISE)
            .duplicates(DuplicatePolicy.REJECT)
            .build();
    CsrGraph g = built.graph();
    assertEquals(34, g.nodeCount());
    assertEquals(2 * 78 + 34, g.edgeCount()); // each tie both ways, plus one self-loop per member
    GraphStatistics stats = GraphStatistics.of(g);
    assertEquals(34, stats.selfLoopCount());
    // Zachary 1977 (from memory): the two leaders have 17 and 16 ties; +1 for the self-loop
    assertEquals(18, stats.maxDegree());
    List<Integer> degrees = new ArrayList<>();
    for (int i = 0; i < 34; i++) {
      degrees.add(g.degree(i) - 1);
      assertEquals(karate.degreeOf(built.nodes().idOf(i)), g.degree(i) - 1, "node " + i);
    }
    degrees.sort(null);
    assertEquals(List.of(16, 17), degrees.subList(32, 34));
    assertEquals(
        directedPairs(karate),
        withoutSelfLoops(directedPairs(JGraphTExport.toDirected(built))),
        "export over the vertices' own ids");
  }

  private static <V> Set<List<V>> withoutSelfLoops(Set<List<V>> pairs) {
    pairs.removeIf(p -> p.get(0).equals(p.get(1)));
    return pairs;
  }

  /** Round trip JGraphT -> CSR -> JGraphT with JGraphT's own generators keeps the edge set. */
  @Test
  void roundTripThroughJGraphTGenerators() {
    List<Supplier<Graph<Integer, DefaultEdge>>> graphs = new ArrayList<>();
    for (long seed : new long[] {11, 12}) {
      graphs.add(
          () -> {
            Graph<Integer, DefaultEdge> g = directed();
            new GnpRandomGraphGenerator<Integer, DefaultEdge>(60, 0.1, seed, true).generateGraph(g);
            return g;
          });
      graphs.add(
          () -> {
            Graph<Integer, DefaultEdge> g = undirected();
            new GnpRandomGraphGenerator<Integer, DefaultEdge>(80, 0.05, seed, false)
                .generateGraph(g);
            return g;
          });
      graphs.add(
          () -> {
            Graph<Integer, DefaultEdge> g = undirected();
            new BarabasiAlbertGraphGenerator<Integer, DefaultEdge>(4, 3, 200, seed)
                .generateGraph(g);
            return g;
          });
    }
    graphs.add(
        () -> {
          Graph<Integer, DefaultEdge> g = undirected();
          new CompleteGraphGenerator<Integer, DefaultEdge>(12).generateGraph(g);
          return g;
        });
    graphs.add(
        () -> {
          Graph<Integer, DefaultEdge> g = directed();
          new CompleteGraphGenerator<Integer, DefaultEdge>(9).generateGraph(g);
          return g;
        });
    for (int k = 0; k < graphs.size(); k++) {
      Graph<Integer, DefaultEdge> original = graphs.get(k).get();
      IndexedGraph<Integer> built =
          JGraphTGraphBuilder.from(original)
              .selfLoops(SelfLoopPolicy.AS_GIVEN)
              .duplicates(DuplicatePolicy.REJECT)
              .build();
      String where = "graph " + k + " (" + original.getType() + ")";
      assertEquals(original.vertexSet().size(), built.graph().nodeCount(), where);
      assertEquals(directedPairs(original).size(), built.graph().edgeCount(), where);
      Graph<Integer, DefaultEdge> back = JGraphTExport.toDirected(built);
      assertEquals(original.vertexSet(), back.vertexSet(), where);
      assertEquals(directedPairs(original), directedPairs(back), where);
      if (original.getType().isUndirected()) {
        Graph<Integer, DefaultEdge> undirectedBack = JGraphTExport.toUndirected(built.graph());
        Set<Set<Integer>> expected = new HashSet<>();
        for (DefaultEdge e : original.edgeSet()) {
          expected.add(Set.of(original.getEdgeSource(e), original.getEdgeTarget(e)));
        }
        Set<Set<Integer>> actual = new HashSet<>();
        for (DefaultEdge e : undirectedBack.edgeSet()) {
          actual.add(
              Set.of(
                  built.nodes().idOf(undirectedBack.getEdgeSource(e)),
                  built.nodes().idOf(undirectedBack.getEdgeTarget(e))));
        }
        assertEquals(expected, actual, where);
      }
      // CSR -> JGraphT -> CSR gives back the same CSR
      assertEquals(
          built.graph(),
          JGraphTGraphBuilder.from(JGraphTExport.toDirected(built.graph()))
              .selfLoops(SelfLoopPolicy.AS_GIVEN)
              .build()
              .graph(),
          where);
    }
  }

  @Test
  void vertexOrderIsVertexSetOrderAndIndexMapsBothWays() {
    Graph<String, DefaultEdge> g = new DefaultDirectedGraph<>(DefaultEdge.class);
    for (String v : List.of("zoe", "adam", "mia")) {
      g.addVertex(v);
    }
    g.addEdge("adam", "zoe");
    g.addEdge("mia", "zoe");
    IndexedGraph<String> built =
        JGraphTGraphBuilder.from(g).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    NodeIndex<String> nodes = built.nodes();
    assertEquals(
        List.of("zoe", "adam", "mia"), List.of(nodes.idOf(0), nodes.idOf(1), nodes.idOf(2)));
    assertEquals(0, nodes.requireIndexOf("zoe"));
    assertEquals(2, nodes.indexOf("mia"));
    assertEquals(-1, nodes.indexOf("bob"));
    assertFalse(nodes.contains("bob"));
    NoSuchElementException ex =
        assertThrows(NoSuchElementException.class, () -> nodes.requireIndexOf("bob"));
    assertTrue(ex.getMessage().contains("bob"), ex.getMessage());
    assertThrows(IndexOutOfBoundsException.class, () -> nodes.idOf(3));
    // zoe (row 0) attends to adam (1) and mia (2)
    assertArrayEquals(new int[] {0, 2, 2, 2}, built.graph().rowOffsets());
    assertArrayEquals(new int[] {1, 2}, built.graph().columns());
  }

  @Test
  void parallelEdgesMergedOrRejectedAndUndirectedSelfLoopKeptOnce() {
    Multigraph<String, DefaultEdge> multi = new Multigraph<>(DefaultEdge.class);
    multi.addVertex("a");
    multi.addVertex("b");
    multi.addEdge("a", "b");
    multi.addEdge("a", "b");
    CsrGraph merged =
        JGraphTGraphBuilder.from(multi).selfLoops(SelfLoopPolicy.AS_GIVEN).build().graph();
    assertEquals(2, merged.edgeCount());
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class,
            () -> JGraphTGraphBuilder.from(multi).duplicates(DuplicatePolicy.REJECT).build());
    assertTrue(ex.getMessage().contains("undirected edge {a, b}"), ex.getMessage());
    assertTrue(ex.getMessage().contains("JGraphT edge #0"), ex.getMessage());
    assertTrue(ex.getMessage().contains("JGraphT edge #1"), ex.getMessage());

    Pseudograph<String, DefaultEdge> pseudo = new Pseudograph<>(DefaultEdge.class);
    pseudo.addVertex("a");
    pseudo.addEdge("a", "a");
    CsrGraph loop =
        JGraphTGraphBuilder.from(pseudo)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .duplicates(DuplicatePolicy.REJECT)
            .build()
            .graph();
    assertArrayEquals(new int[] {0}, loop.columns());
  }

  @Test
  void directedGraphSymmetrisedTreatsReverseEdgesAsOneTie() {
    Graph<Integer, DefaultEdge> g = directed();
    g.addVertex(0);
    g.addVertex(1);
    g.addEdge(0, 1);
    g.addEdge(1, 0);
    CsrGraph sym =
        JGraphTGraphBuilder.from(g)
            .selfLoops(SelfLoopPolicy.AS_GIVEN)
            .direction(DirectionPolicy.SYMMETRISE)
            .build()
            .graph();
    assertEquals(2, sym.edgeCount());
    assertThrows(
        IllegalArgumentException.class,
        () ->
            JGraphTGraphBuilder.from(g)
                .direction(DirectionPolicy.SYMMETRISE)
                .duplicates(DuplicatePolicy.REJECT)
                .build());
  }

  @Test
  void exportToUndirectedRejectsAnAsymmetricGraph() {
    CsrGraph oneWay = CsrGraph.of(new int[] {0, 0, 1}, new int[] {0});
    IllegalArgumentException ex =
        assertThrows(IllegalArgumentException.class, () -> JGraphTExport.toUndirected(oneWay));
    assertTrue(ex.getMessage().contains("row 1 has column 0"), ex.getMessage());
  }

  @Test
  void indexedGraphRejectsMismatchedSizes() {
    CsrGraph g = CsrGraph.of(new int[] {0, 0}, new int[0]);
    IllegalArgumentException ex =
        assertThrows(
            IllegalArgumentException.class, () -> new IndexedGraph<>(g, LongNodeIndex.identity(2)));
    assertTrue(ex.getMessage().contains("2 ids"), ex.getMessage());
  }
}
