package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.io.BufferedWriter;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.jgrapht.Graph;
import org.jgrapht.generate.NamedGraphGenerator;
import org.jgrapht.graph.DefaultEdge;
import org.jgrapht.graph.SimpleGraph;
import org.jgrapht.util.SupplierUtil;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** The same graph through all three front doors (arrays, JGraphT, file) gives the same CSR. */
class ThreeSourcesAgreeTest {

  @TempDir Path dir;

  /** Zachary 1977 karate club (JGraphT's NamedGraphGenerator), under every policy. */
  @Test
  void karateClubThroughArraysJGraphTAndFile() throws IOException {
    Graph<Integer, DefaultEdge> karate =
        new SimpleGraph<>(
            SupplierUtil.createIntegerSupplier(), SupplierUtil.DEFAULT_EDGE_SUPPLIER, false);
    new NamedGraphGenerator<Integer, DefaultEdge>().generateZacharyKarateClubGraph(karate);
    IndexedGraph<Integer> viaJGraphT = JGraphTGraphBuilder.from(karate).build();
    NodeIndex<Integer> index = viaJGraphT.nodes();
    int m = karate.edgeSet().size();
    int[] s = new int[m];
    int[] t = new int[m];
    Path file = dir.resolve("karate.csv");
    int k = 0;
    try (BufferedWriter w = Files.newBufferedWriter(file)) {
      w.write("# Zachary 1977 karate club, one undirected tie per line\nfrom,to\n");
      // vertices are written as "m<id>", so the file's ids are text
      for (DefaultEdge e : karate.edgeSet()) {
        s[k] = index.indexOf(karate.getEdgeSource(e));
        t[k] = index.indexOf(karate.getEdgeTarget(e));
        w.write("m" + karate.getEdgeSource(e) + ",m" + karate.getEdgeTarget(e) + "\n");
        k++;
      }
    }
    for (SelfLoopPolicy loops : SelfLoopPolicy.values()) {
      for (DuplicatePolicy dup : DuplicatePolicy.values()) {
        String where = loops + ", " + dup;
        CsrGraph fromJGraphT =
            JGraphTGraphBuilder.from(karate).selfLoops(loops).duplicates(dup).build().graph();
        CsrGraph fromArrays =
            CsrGraphBuilder.fromEdges(s, t, karate.vertexSet().size())
                .selfLoops(loops)
                .direction(DirectionPolicy.SYMMETRISE)
                .duplicates(dup)
                .build();
        assertEquals(fromJGraphT, fromArrays, where);
        EdgeListResult<String> fromFile =
            EdgeListFileBuilder.stringIds(file)
                .header(true)
                .selfLoops(loops)
                .direction(DirectionPolicy.SYMMETRISE)
                .duplicates(dup)
                .build();
        // Node order differs (order of first appearance); compare through the ids.
        CsrGraph f = fromFile.graph();
        assertEquals(fromArrays.edgeCount(), f.edgeCount(), where);
        for (int i = 0; i < f.nodeCount(); i++) {
          int row = index.indexOf(Integer.valueOf(fromFile.nodes().idOf(i).substring(1)));
          assertEquals(fromArrays.degree(row), f.degree(i), where + ", node " + i);
          for (int e = f.rowStart(i); e < f.rowEnd(i); e++) {
            int col =
                index.indexOf(Integer.valueOf(fromFile.nodes().idOf(f.column(e)).substring(1)));
            assertTrue(fromArrays.allows(row, col), where);
          }
        }
      }
    }
  }

  @Test
  void longNodeIndexIdentityAndMapped() {
    LongNodeIndex identity = LongNodeIndex.identity(3);
    assertTrue(identity.isIdentity());
    assertEquals(2, identity.indexOfId(2));
    assertEquals(-1, identity.indexOfId(3));
    assertEquals(-1, identity.indexOfId(-1));
    assertEquals(0, identity.storageBytes());
    assertThrows(IndexOutOfBoundsException.class, () -> identity.idAt(3));
    assertThrows(IllegalArgumentException.class, () -> LongNodeIndex.identity(-1));
    LongIdTable table = new LongIdTable(2);
    for (long id = 0; id < 1000; id++) {
      assertEquals((int) id, table.indexOrAdd(id * 1_000_003L - 7));
    }
    assertEquals(5, table.indexOrAdd(5 * 1_000_003L - 7));
    LongNodeIndex mapped = table.freeze();
    assertFalse(mapped.isIdentity());
    assertEquals(1000, mapped.size());
    for (int i = 0; i < 1000; i++) {
      assertEquals(i, mapped.indexOfId(mapped.idAt(i)));
    }
    assertEquals(-1, mapped.indexOfId(3));
    assertThrows(NullPointerException.class, () -> mapped.indexOf(null));
  }
}
