package dev.heed.live;

import dev.heed.graph.CsrGraph;
import java.util.Arrays;

/**
 * The row editors of one staged batch, found by target without boxing: an open-addressing table of
 * editor positions (linear probing, load at most 1/2) beside the editors in the order they were
 * made. Confined to the applying thread.
 */
final class RowEditors {

  private LiveSnapshot<?> from;
  private RowEditor[] editors;
  private int count;
  private int[] table; // position + 1, or 0 for an empty slot

  /** Starts with room for {@code expected} editors without growing. */
  RowEditors(LiveSnapshot<?> from, int expected) {
    this.from = from;
    int capacity = Math.max(16, Integer.highestOneBit(Math.max(expected, 1) - 1) << 1);
    this.editors = new RowEditor[capacity];
    this.table = new int[2 * capacity];
  }

  /** Returns the editor of {@code target}, making it on first use. */
  RowEditor of(int target) {
    return of(target, null, false);
  }

  /**
   * Returns the editor of {@code target}, making it on first use with {@code delta}, the row's
   * delta in the snapshot read ({@code from}), which the caller looked up already.
   */
  RowEditor of(int target, Object delta) {
    return of(target, delta, true);
  }

  private RowEditor of(int target, Object knownDelta, boolean known) {
    int mask = table.length - 1;
    int slot = mix(target) & mask;
    while (true) {
      int entry = table[slot];
      if (entry == 0) {
        break;
      }
      if (editors[entry - 1].target == target) {
        return editors[entry - 1];
      }
      slot = (slot + 1) & mask;
    }
    CsrGraph base = from.base;
    Object delta = known ? knownDelta : target < from.nodeCount ? from.rowDeltas.get(target) : null;
    assert delta == (target < from.nodeCount ? from.rowDeltas.get(target) : null);
    RowEditor editor = new RowEditor(target, base, delta);
    if (count == editors.length) {
      editors = Arrays.copyOf(editors, count * 2);
    }
    editors[count++] = editor;
    table[slot] = count;
    if (2 * count > table.length) {
      rehash();
    }
    return editor;
  }

  /** Makes editors made from now on read {@code newer}, a later version with the same base. */
  void readFrom(LiveSnapshot<?> newer) {
    from = newer;
  }

  int size() {
    return count;
  }

  RowEditor get(int position) {
    return editors[position];
  }

  /** Puts {@code editor}, which must be for the same target, in the place of editor {@code p}. */
  void replace(int position, RowEditor editor) {
    assert editor.target == editors[position].target;
    editors[position] = editor;
  }

  /** Returns the editors' positions, ordered by target. */
  int[] positionsByTarget() {
    long[] keys = new long[count];
    for (int p = 0; p < count; p++) {
      keys[p] = (long) editors[p].target << 32 | p;
    }
    Arrays.sort(keys);
    int[] positions = new int[count];
    for (int k = 0; k < count; k++) {
      positions[k] = (int) keys[k];
    }
    return positions;
  }

  private void rehash() {
    int[] next = new int[table.length * 2];
    int mask = next.length - 1;
    for (int p = 0; p < count; p++) {
      int slot = mix(editors[p].target) & mask;
      while (next[slot] != 0) {
        slot = (slot + 1) & mask;
      }
      next[slot] = p + 1;
    }
    table = next;
  }

  private static int mix(int key) {
    int h = key * 0x9E3779B9;
    return h ^ (h >>> 16);
  }
}
