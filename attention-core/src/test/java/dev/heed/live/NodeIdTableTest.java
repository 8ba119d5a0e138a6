package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The id table answers like a map while it grows, and a view answers for its own size only, when
 * many ids share a slot or all of their hash bits (the table's tags then tell nothing apart and
 * equals decides).
 */
class NodeIdTableTest {

  /** An id whose hash code is chosen by the test; equal when the names are equal. */
  private record Key(String name, int hash) {
    @Override
    public boolean equals(Object o) {
      return o instanceof Key && ((Key) o).name.equals(name);
    }

    @Override
    public int hashCode() {
      return hash;
    }
  }

  @Test
  void findsEveryIdWhileGrowingWithCollidingHashes() {
    SplittableRandom random = new SplittableRandom(23);
    NodeIdTable<Key> table = new NodeIdTable<>();
    List<Key> added = new ArrayList<>();
    List<NodeIdView<Key>> views = new ArrayList<>();
    for (int i = 0; i < 5000; i++) {
      // a third share one hash code, a third one of 8 codes, the rest random
      int kind = random.nextInt(3);
      int hash = kind == 0 ? 77 : kind == 1 ? random.nextInt(8) : random.nextInt();
      Key key = new Key("n" + i, hash);
      table.append(key);
      added.add(key);
      if (i % 500 == 0) {
        views.add(table.view());
      }
    }
    for (int i = 0; i < added.size(); i++) {
      assertEquals(i, table.indexOf(added.get(i)));
      assertEquals(i, table.indexOf(new Key("n" + i, added.get(i).hash)));
    }
    assertEquals(-1, table.indexOf(new Key("absent", 77)));
    assertEquals(-1, table.indexOf(new Key("absent", 3)));
    for (NodeIdView<Key> view : views) {
      Object[] keys = new Object[added.size() + 3];
      int[] expected = new int[keys.length];
      for (int i = 0; i < added.size(); i++) {
        keys[i] = new Key("n" + i, added.get(i).hash);
        expected[i] = i < view.size() ? i : -1;
        assertEquals(expected[i], view.indexOf(added.get(i)), "view of " + view.size());
      }
      keys[added.size()] = null;
      keys[added.size() + 1] = new Key("absent", 77);
      keys[added.size() + 2] = new Key("absent", random.nextInt());
      expected[added.size()] = -1;
      expected[added.size() + 1] = -1;
      expected[added.size() + 2] = -1;
      int[] found = new int[keys.length];
      view.indexOfAll(keys, keys.length, found);
      assertArrayEquals(expected, found, "view of " + view.size());
    }
  }
}
