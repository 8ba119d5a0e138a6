package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.SelfLoopPolicy;
import java.util.ArrayList;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.constraints.IntRange;

/**
 * The live graph's stated contract (the class comment of {@link VersionedGraph}): after any
 * sequence of batches, a snapshot's rows equal the {@link CsrGraph} that {@link
 * CsrGraphBuilder#fromEdges} builds from the edges added and not removed, under the same policies,
 * before and after compaction. Random and degenerate histories: no nodes, nodes without edges, all
 * self-loops, one hub, edges added twice, edges removed and added again.
 */
class LiveGraphPropertiesTest {

  private static final int FEATURES = 2;

  @Property(tries = 160)
  void snapshotRowsEqualTheBatchBuilderOfTheSameEdges(
      @ForAll @IntRange(min = 0, max = 40) int n,
      @ForAll @IntRange(min = 0, max = 4) int shape,
      @ForAll long seed,
      @ForAll SelfLoopPolicy selfLoops,
      @ForAll DirectionPolicy direction,
      @ForAll DuplicatePolicy duplicates) {
    SplittableRandom random = new SplittableRandom(seed);
    try (VersionedGraph<String> graph =
        VersionedGraph.builder(FEATURES)
            .selfLoops(selfLoops)
            .direction(direction)
            .duplicates(duplicates)
            .backgroundCompaction(false)
            .build()) {
      UpdateBatch<String> nodes = graph.newBatch();
      for (int i = 0; i < n; i++) {
        nodes.addNode("v" + i, new float[] {i, -i});
      }
      graph.apply(nodes);
      // present edges by key (an undirected tie has one key under SYMMETRISE), in insertion order
      Map<Long, int[]> present = new LinkedHashMap<>();
      int batches = n == 0 ? 0 : 1 + random.nextInt(8);
      for (int b = 0; b < batches; b++) {
        UpdateBatch<String> batch = graph.newBatch();
        int ops = random.nextInt(3 * n + 1);
        for (int op = 0; op < ops; op++) {
          int[] edge = edge(shape, n, random);
          long key = key(edge, direction);
          boolean keptLoop = selfLoops == SelfLoopPolicy.ADD && edge[0] == edge[1];
          if (present.containsKey(key) && !keptLoop && random.nextInt(3) == 0) {
            int[] was = present.remove(key);
            batch.removeEdge("v" + was[0], "v" + was[1]);
          } else if (!present.containsKey(key) || duplicates == DuplicatePolicy.MERGE) {
            batch.addEdge("v" + edge[0], "v" + edge[1]);
            present.putIfAbsent(key, edge);
          }
        }
        graph.apply(batch);
        if (random.nextInt(4) == 0) {
          graph.compact();
        }
      }
      List<int[]> edges = new ArrayList<>(present.values());
      int[] src = new int[edges.size()];
      int[] dst = new int[edges.size()];
      for (int k = 0; k < src.length; k++) {
        src[k] = edges.get(k)[0];
        dst[k] = edges.get(k)[1];
      }
      CsrGraph expected =
          CsrGraphBuilder.fromEdges(src, dst, n)
              .selfLoops(selfLoops)
              .direction(direction)
              .duplicates(duplicates)
              .build();
      assertRowsEqual(expected, graph.snapshot());
      assertRowsEqual(expected, graph.compact());
      assertEquals(expected, graph.snapshot().toIndexedGraph().graph());
    }
  }

  private static void assertRowsEqual(CsrGraph expected, LiveSnapshot<String> snapshot) {
    assertEquals(expected.nodeCount(), snapshot.nodeCount());
    assertEquals(expected.entryCount(), snapshot.edgeCount());
    for (int i = 0; i < expected.nodeCount(); i++) {
      int[] want = new int[expected.degree(i)];
      expected.copyRow(i, want, 0);
      int[] got = new int[snapshot.degree(i)];
      snapshot.copyRow(i, got, 0);
      assertArrayEquals(want, got, "row " + i);
    }
  }

  /** An edge of the history's shape: 0 random, 1 self-loops, 2 a hub (node 0), 3 few distinct. */
  private static int[] edge(int shape, int n, SplittableRandom random) {
    int a = random.nextInt(n);
    int b = random.nextInt(n);
    return switch (shape) {
      case 1 -> new int[] {a, a};
      case 2 -> random.nextBoolean() ? new int[] {0, a} : new int[] {a, 0};
      case 3 -> new int[] {a % 3 % n, b % 3 % n};
      default -> new int[] {a, b};
    };
  }

  private static long key(int[] edge, DirectionPolicy direction) {
    int s = edge[0];
    int t = edge[1];
    if (direction == DirectionPolicy.SYMMETRISE && s > t) {
      int tmp = s;
      s = t;
      t = tmp;
    }
    return ((long) s << 32) | t;
  }
}
