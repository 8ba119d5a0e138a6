package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertSame;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The persistent trie keeps every published version intact while later edits build on it. */
class SlotTrieTest {

  @Test
  void editsNeverChangeAPublishedTrie() {
    SplittableRandom random = new SplittableRandom(11);
    SlotTrie trie = SlotTrie.EMPTY;
    Map<Integer, Object> expected = new HashMap<>();
    List<SlotTrie> versions = new ArrayList<>();
    List<Map<Integer, Object>> contents = new ArrayList<>();
    for (int v = 0; v < 40; v++) {
      SlotTrie.Editor edit = trie.edit();
      for (int k = 0; k < 50; k++) {
        // indices across several trie heights, including the largest int
        int index =
            random.nextInt(4) == 0
                ? Integer.MAX_VALUE - random.nextInt(3)
                : random.nextInt(1 << (5 * (1 + random.nextInt(4))));
        Object value = random.nextInt(5) == 0 ? null : "v" + v + "-" + k;
        Object previous = edit.set(index, value);
        assertSame(expected.get(index), previous);
        if (value == null) {
          expected.remove(index);
        } else {
          expected.put(index, value);
        }
        assertSame(value, edit.get(index));
      }
      trie = edit.finish();
      versions.add(trie);
      contents.add(new HashMap<>(expected));
      assertEquals(expected.size(), trie.size());
    }
    for (int v = 0; v < versions.size(); v++) {
      for (Map.Entry<Integer, Object> entry : contents.get(v).entrySet()) {
        assertSame(entry.getValue(), versions.get(v).get(entry.getKey()), "version " + v);
      }
      // the staged lookup answers as get() one by one, for present and absent indices alike
      int[] indices = new int[contents.get(v).size() + 64];
      int count = 0;
      for (int index : contents.get(v).keySet()) {
        indices[count++] = index;
      }
      while (count < indices.length) {
        indices[count++] =
            random.nextBoolean() ? random.nextInt(1 << 20) : Integer.MAX_VALUE - random.nextInt(9);
      }
      Object[] found = new Object[count];
      versions.get(v).getAll(indices, count, found);
      for (int k = 0; k < count; k++) {
        assertSame(versions.get(v).get(indices[k]), found[k], "version " + v + " index " + k);
      }
      assertEquals(contents.get(v).size(), versions.get(v).size());
    }
    Object[] none = {"stale"};
    SlotTrie.EMPTY.getAll(new int[] {12345}, 1, none);
    assertNull(none[0]);
    assertNull(SlotTrie.EMPTY.get(12345));
    assertTrue(SlotTrie.EMPTY.isEmpty());
  }

  @Test
  void oneEditCopiesEachNodeOnce() {
    SlotTrie.Editor first = SlotTrie.EMPTY.edit();
    for (int i = 0; i < 1024; i++) {
      first.set(i, i);
    }
    SlotTrie full = first.finish();
    // 32 leaves and one root for 1024 consecutive slots
    assertEquals(33, full.nodeCount());
    SlotTrie.Editor second = full.edit();
    for (int i = 0; i < 1024; i += 2) {
      second.set(i, -i);
    }
    SlotTrie changed = second.finish();
    assertEquals(33, changed.nodeCount());
    assertEquals(-2, changed.get(2));
    assertEquals(2, full.get(2));
    assertEquals(3, changed.get(3));
  }
}
