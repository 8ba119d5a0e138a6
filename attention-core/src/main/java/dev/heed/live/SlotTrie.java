package dev.heed.live;

import java.util.ArrayList;
import java.util.List;

/**
 * A persistent array of object slots indexed by node id: a radix trie of 32-way nodes, so a lookup
 * follows at most {@code ceil(31 / 5) = 7} references (4 for a million nodes) and an update copies
 * only the nodes on its path (path copying, the structural sharing of purely functional trees;
 * Okasaki, <i>Purely Functional Data Structures</i>, 1998). A published trie is never modified, so
 * any number of threads may read it while a writer builds the next one.
 *
 * <p>Updates go through an {@link Editor}, which copies each trie node at most once per edit (the
 * "transient" idea: nodes the editor made itself carry its owner mark in one extra slot and are
 * changed in place until {@link Editor#finish()}, which clears the marks). Storage: one {@code
 * Object[33]} per trie node, {@value #NODE_BYTES} bytes with compressed references (common practice
 * for heaps under 32 GiB: 16-byte header, 4-byte references, 8-byte alignment), plus the slot
 * values themselves. Nodes whose slots all become null are not pruned; the owner (compaction)
 * starts from an empty trie instead.
 */
final class SlotTrie {

  static final int BITS = 5;
  static final int WIDTH = 1 << BITS;
  static final int MASK = WIDTH - 1;

  /** Bytes of one trie node: header 16 + 33 references of 4 bytes, rounded up to 8. */
  static final long NODE_BYTES = 152;

  static final SlotTrie EMPTY = new SlotTrie(null, 0, 0, 0);

  private final Object[] root; // null when no node was ever made
  private final int shift; // the root covers indices below 1 << (shift + BITS)
  private final int nodeCount;
  private final int size; // slots holding a value

  private SlotTrie(Object[] root, int shift, int nodeCount, int size) {
    this.root = root;
    this.shift = shift;
    this.nodeCount = nodeCount;
    this.size = size;
  }

  /** Returns the value at {@code index} (at least 0), or null. */
  Object get(int index) {
    return find(root, shift, index);
  }

  private static Object find(Object[] root, int shift, int index) {
    Object[] node = root;
    if (node == null || !covers(shift, index)) {
      return null;
    }
    for (int s = shift; s > 0; s -= BITS) {
      node = (Object[]) node[(index >>> s) & MASK];
      if (node == null) {
        return null;
      }
    }
    return node[index & MASK];
  }

  /**
   * Looks up {@code indices[0..count-1]} (each at least 0) into {@code out}: the answers of {@link
   * #get} one by one, but found one trie level at a time over all indices, so that the cache misses
   * of different lookups overlap instead of waiting one after another (group prefetching; Chen,
   * Ailamaki, Gibbons, Mowry, "Improving Hash Join Performance through Prefetching", ICDE 2004).
   */
  void getAll(int[] indices, int count, Object[] out) {
    for (int k = 0; k < count; k++) {
      out[k] = root != null && covers(shift, indices[k]) ? root : null;
    }
    for (int s = shift; s > 0; s -= BITS) {
      for (int k = 0; k < count; k++) {
        Object[] node = (Object[]) out[k];
        if (node != null) {
          out[k] = node[(indices[k] >>> s) & MASK];
        }
      }
    }
    for (int k = 0; k < count; k++) {
      Object[] node = (Object[]) out[k];
      out[k] = node == null ? null : node[indices[k] & MASK];
    }
  }

  /** Returns whether every slot is null (the trie may still hold nodes). */
  boolean isEmpty() {
    return size == 0;
  }

  /** Returns the number of slots holding a value. */
  int size() {
    return size;
  }

  /** Returns the number of trie nodes, for memory accounting. */
  int nodeCount() {
    return nodeCount;
  }

  /** Starts an edit; the editor is confined to the calling thread. */
  Editor edit() {
    return new Editor(this);
  }

  private static boolean covers(int shift, int index) {
    return shift + BITS >= Integer.SIZE - 1 || (index >>> (shift + BITS)) == 0;
  }

  /**
   * Builds a new trie from an old one by path copying. Not thread safe; the old trie is never
   * modified and stays valid.
   */
  static final class Editor {
    private Object[] root;
    private int shift;
    private int nodeCount;
    private int size;
    private final List<Object[]> owned = new ArrayList<>();
    private boolean finished;

    private Editor(SlotTrie from) {
      this.root = from.root;
      this.shift = from.shift;
      this.nodeCount = from.nodeCount;
      this.size = from.size;
    }

    /**
     * Sets the slot at {@code index} (at least 0) and returns its previous value. Setting null
     * where nothing was stored creates no nodes.
     */
    Object set(int index, Object value) {
      assert !finished : "editor already finished";
      assert index >= 0 : index;
      if (root == null) {
        if (value == null) {
          return null;
        }
        root = fresh();
        shift = 0;
      }
      while (!covers(shift, index)) {
        if (value == null) {
          return null;
        }
        Object[] grown = fresh();
        grown[0] = root;
        root = grown;
        shift += BITS;
      }
      root = own(root);
      Object[] node = root;
      for (int s = shift; s > 0; s -= BITS) {
        int slot = (index >>> s) & MASK;
        Object[] child = (Object[]) node[slot];
        if (child == null) {
          if (value == null) {
            return null;
          }
          child = fresh();
        } else {
          child = own(child);
        }
        node[slot] = child;
        node = child;
      }
      Object previous = node[index & MASK];
      node[index & MASK] = value;
      size += (value != null ? 1 : 0) - (previous != null ? 1 : 0);
      return previous;
    }

    /** Returns the current value at {@code index}, including this editor's changes. */
    Object get(int index) {
      return find(root, shift, index);
    }

    /** Ends the edit and returns the new trie; the editor cannot be used afterwards. */
    SlotTrie finish() {
      finished = true;
      for (Object[] node : owned) {
        node[WIDTH] = null;
      }
      owned.clear();
      return root == null ? EMPTY : new SlotTrie(root, shift, nodeCount, size);
    }

    private Object[] fresh() {
      Object[] node = new Object[WIDTH + 1];
      node[WIDTH] = this;
      owned.add(node);
      nodeCount++;
      return node;
    }

    private Object[] own(Object[] node) {
      if (node[WIDTH] == this) {
        return node;
      }
      Object[] copy = node.clone();
      copy[WIDTH] = this;
      owned.add(copy);
      return copy;
    }
  }
}
