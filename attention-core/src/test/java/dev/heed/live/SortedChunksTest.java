package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.TreeSet;
import org.junit.jupiter.api.Test;

/** Chunked sets agree with a TreeSet through random updates, and old versions stay as they were. */
class SortedChunksTest {

  private static int[] values(SortedChunks set) {
    int[] all = new int[set.size()];
    set.copyTo(all, 0);
    return all;
  }

  private static int[] sorted(TreeSet<Integer> set) {
    return set.stream().mapToInt(Integer::intValue).toArray();
  }

  @Test
  void randomUpdatesMatchATreeSet() {
    SplittableRandom random = new SplittableRandom(5);
    TreeSet<Integer> expected = new TreeSet<>();
    SortedChunks set = SortedChunks.EMPTY;
    List<SortedChunks> versions = new ArrayList<>();
    List<int[]> contents = new ArrayList<>();
    for (int round = 0; round < 300; round++) {
      TreeSet<Integer> drop = new TreeSet<>();
      TreeSet<Integer> add = new TreeSet<>();
      int changes = random.nextInt(round < 100 ? 300 : 40);
      for (int k = 0; k < changes; k++) {
        int v = random.nextInt(5000);
        if (expected.contains(v) && !add.contains(v)) {
          drop.add(v);
        } else if (!expected.contains(v) && !drop.contains(v)) {
          add.add(v);
        }
      }
      drop.add(-1 - random.nextInt(10)); // a value the set does not hold is ignored
      set = set.update(sorted(drop), drop.size(), sorted(add), add.size());
      expected.removeAll(drop);
      expected.addAll(add);
      assertArrayEquals(sorted(expected), values(set), "round " + round);
      assertEquals(expected.size(), set.size());
      long bytes = 32 + 2 * Layout.arrayBytes(set.chunkCount(), 4);
      for (int c = 0; c < set.chunkCount(); c++) {
        assertTrue(set.chunk(c).length >= 1 && set.chunk(c).length <= SortedChunks.MAX_CHUNK);
        bytes += Layout.arrayBytes(set.chunk(c).length, 4);
      }
      assertEquals(bytes, set.bytes(), "bytes kept while updating, round " + round);
      for (int probe = 0; probe < 20; probe++) {
        int v = random.nextInt(5100) - 50;
        assertEquals(expected.contains(v), set.contains(v), "value " + v);
      }
      versions.add(set);
      contents.add(sorted(expected));
    }
    for (int v = 0; v < versions.size(); v++) {
      assertArrayEquals(contents.get(v), values(versions.get(v)), "version " + v);
    }
  }

  @Test
  void untouchedChunksAreShared() {
    int[] values = new int[1000];
    for (int i = 0; i < values.length; i++) {
      values[i] = 2 * i;
    }
    SortedChunks set = SortedChunks.of(values, 0, values.length);
    int chunks = (1000 + SortedChunks.MAX_CHUNK - 1) / SortedChunks.MAX_CHUNK;
    assertEquals(chunks, set.chunkCount());
    SortedChunks changed = set.update(new int[0], 0, new int[] {501}, 1);
    int shared = 0;
    for (int c = 0; c < changed.chunkCount(); c++) {
      for (int d = 0; d < set.chunkCount(); d++) {
        if (changed.chunk(c) == set.chunk(d)) {
          shared++;
        }
      }
    }
    assertEquals(chunks - 1, shared); // all but the chunk that took 501
    assertTrue(changed.contains(501));
    assertTrue(!set.contains(501));
    assertSame(set, set.update(new int[0], 0, new int[0], 0));
  }
}
