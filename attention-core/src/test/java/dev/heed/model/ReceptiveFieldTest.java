package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.Subgraphs;
import dev.heed.graph.generate.RmatGenerator;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.HashSet;
import java.util.List;
import java.util.Map;
import java.util.NoSuchElementException;
import java.util.Random;
import java.util.Set;
import org.junit.jupiter.api.Test;

/**
 * The receptive-field plan: its node order, the rows each layer reads and computes, its local
 * patterns, and the id map it is built with. Graphs are R-MAT graphs ({@link RmatGenerator}:
 * Chakrabarti, Zhan, Faloutsos, SDM 2004). The fact under test: attention layer l of L must compute
 * the targets' (L−1−l')-hop in-neighbourhood, where l' counts the attention layers before it, and
 * read one hop more (each attention layer reads a row's in-neighbours).
 */
class ReceptiveFieldTest {

  private static final int FEATURES = 5;
  private static final int CLASSES = 3;

  private static CsrGraph graph(long seed) {
    return RmatGenerator.withScale(9)
        .edgeFactor(4)
        .seed(seed)
        .generateEdges()
        .direction(DirectionPolicy.KEEP)
        .selfLoops(SelfLoopPolicy.ADD)
        .build();
  }

  @Test
  void layersComputeNestedPrefixesOfTheFieldOverTheirInNeighbours() {
    CsrGraph graph = graph(3L);
    AttentionModel model = RandomModels.gatGatv2Dense(3L, FEATURES, CLASSES);
    Random random = new Random(3L);
    for (int round = 0; round < 10; round++) {
      int[] targets = new int[1 + random.nextInt(20)];
      for (int i = 0; i < targets.length; i++) {
        targets[i] = random.nextInt(graph.nodeCount());
      }
      ReceptiveField field = model.receptiveField(graph, targets, FieldCap.NONE);
      int[] distinct = Arrays.stream(targets).distinct().toArray();
      int[] ids = field.nodeIds();
      // Targets first, in request order, then each hop's new nodes: each layer's rows a prefix.
      assertArrayEquals(distinct, Arrays.copyOf(ids, distinct.length));
      assertEquals(field.nodeCount(), Arrays.stream(ids).distinct().count());
      assertEquals(distinct.length, field.rowsComputed(1));
      assertEquals(
          sorted(Subgraphs.inNeighbourhood(graph, targets, 1)), prefix(ids, field.rowsRead(1)));
      assertEquals(field.rowsRead(1), field.rowsComputed(0));
      assertEquals(
          sorted(Subgraphs.inNeighbourhood(graph, targets, 2)), prefix(ids, field.rowsRead(0)));
      assertEquals(distinct.length, field.rowsRead(2), "dense reads the targets only");
      assertEquals(distinct.length, field.rowsComputed(2));
      for (int layer : new int[] {0, 1}) {
        CsrGraph local = (CsrGraph) field.pattern(layer);
        assertEquals(field.rowsRead(layer), local.nodeCount());
        assertEquals(field.entries(layer), local.entryCount());
        for (int row = 0; row < local.nodeCount(); row++) {
          Set<Integer> sources = new HashSet<>();
          for (int e = local.rowStart(row); e < local.rowEnd(row); e++) {
            sources.add(ids[local.column(e)]);
          }
          Set<Integer> expected = new HashSet<>();
          if (row < field.rowsComputed(layer)) {
            for (int e = graph.rowStart(ids[row]); e < graph.rowEnd(ids[row]); e++) {
              expected.add(graph.column(e));
            }
          }
          assertEquals(expected, sources, "layer " + layer + " row " + row);
        }
      }
      assertEquals(field.entries(0) + field.entries(1), field.size().entries());
    }
  }

  private static Set<Integer> sorted(int[] nodes) {
    Set<Integer> s = new HashSet<>();
    for (int v : nodes) {
      s.add(v);
    }
    return s;
  }

  private static Set<Integer> prefix(int[] ids, int length) {
    return sorted(Arrays.copyOf(ids, length));
  }

  @Test
  void wholeGraphFieldsUseTheGraphsOwnNumbering() {
    CsrGraph graph = graph(4L);
    AttentionModel model = RandomModels.gatGatv2Dense(4L, FEATURES, CLASSES);
    ReceptiveField all = model.wholeGraphField(graph, null, FieldCap.NONE);
    assertTrue(all.wholeGraph());
    assertEquals(graph.nodeCount(), all.targetCount());
    assertEquals(17, all.nodeId(17));
    assertEquals(2 * graph.entryCount(), all.size().entries());
    AttentionPattern complete = CompletePattern.of(40);
    ReceptiveField dense = model.wholeGraphField(complete, new int[] {3, 3, 9}, FieldCap.NONE);
    assertEquals(new FieldSize(2, 40, 2 * 1600L, true), dense.size());
    assertThrows(
        ReceptiveFieldTooLargeException.class,
        () -> model.wholeGraphField(complete, new int[] {3}, FieldCap.NONE.withMaxEntries(3199)));
  }

  @Test
  void forwardChecksTheFieldAndItsFeatures() {
    CsrGraph graph = graph(5L);
    AttentionModel model =
        TestModels.withReferenceKernel(RandomModels.gatGatv2Dense(5L, FEATURES, CLASSES));
    ReceptiveField field = model.receptiveField(graph, new int[] {7, 11}, FieldCap.NONE);
    float[] x = new float[field.nodeCount() * FEATURES];
    Random random = new Random(5L);
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    FieldOutput out = model.forward(field, x, PathChoice.SPARSE, false);
    assertEquals(CLASSES, out.row(11).length);
    assertTrue(out.hasRow(7));
    assertFalse(out.hasRow(8));
    assertThrows(NoSuchElementException.class, () -> out.row(8));
    assertTrue(out.attention().isEmpty());
    assertEquals(model.layers().size(), out.layerRuns().size());

    AttentionModel other = RandomModels.gatGatv2Dense(6L, FEATURES, CLASSES);
    IllegalArgumentException foreign =
        assertThrows(
            IllegalArgumentException.class,
            () -> other.forward(field, x, PathChoice.SPARSE, false));
    assertTrue(foreign.getMessage().contains("another model"), foreign.getMessage());
    // The same layers under other kernel options are the same model.
    model
        .withKernelOptions(model.kernelOptions())
        .receptiveField(graph, new int[] {7}, FieldCap.NONE);

    float[] bad = x.clone();
    bad[FEATURES * 2 + 1] = Float.NaN;
    IllegalArgumentException nan =
        assertThrows(
            IllegalArgumentException.class,
            () -> model.forward(field, bad, PathChoice.SPARSE, false));
    assertTrue(
        nan.getMessage().contains("feature 1 of node " + field.nodeId(2) + " (field row 2)"),
        nan.getMessage());
    IllegalArgumentException shortRows =
        assertThrows(
            IllegalArgumentException.class,
            () -> model.forward(field, Arrays.copyOf(x, FEATURES), PathChoice.SPARSE, false));
    assertTrue(shortRows.getMessage().contains("does the field match?"), shortRows.getMessage());
  }

  @Test
  void localIdsMatchAHashMapAcrossClearsAndGrowth() {
    LocalIdMap ids = new LocalIdMap(4);
    Random random = new Random(11L);
    for (int round = 0; round < 50; round++) {
      ids.clear();
      Map<Integer, Integer> expected = new HashMap<>();
      int inserts = random.nextInt(round < 40 ? 200 : 5000);
      for (int i = 0; i < inserts; i++) {
        int key = random.nextInt(round % 2 == 0 ? 1 << 30 : 300);
        int got = ids.putIfAbsent(key, expected.size());
        Integer had = expected.putIfAbsent(key, expected.size());
        assertEquals(had == null ? -1 : had, got);
      }
      for (int probe = 0; probe < 500; probe++) {
        int key = random.nextInt(round % 2 == 0 ? 1 << 30 : 300);
        assertEquals(expected.getOrDefault(key, -1), ids.get(key));
      }
      for (Map.Entry<Integer, Integer> e : expected.entrySet()) {
        assertEquals(e.getValue(), ids.get(e.getKey()));
      }
    }
    assertTrue(ids.capacity() >= 2 * 1000, "grew to hold thousands");
  }

  @Test
  void theScratchPoolHandsEachCallItsOwnScratch() {
    FieldScratch a = FieldScratch.borrow();
    FieldScratch b = FieldScratch.borrow();
    assertFalse(a == b);
    FieldScratch.release(a);
    FieldScratch.release(b);
    List<FieldScratch> drained = new ArrayList<>();
    for (int i = 0; i < FieldScratch.MAX_POOLED; i++) {
      drained.add(FieldScratch.borrow());
    }
    assertTrue(drained.contains(a) && drained.contains(b), "released scratch is reused");
    drained.forEach(FieldScratch::release);
  }
}
