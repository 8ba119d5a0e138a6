package dev.heed.live;

import java.util.Arrays;

/**
 * An immutable sorted set of ints in chunks of at most {@value #MAX_CHUNK} values, with each
 * chunk's first value in a directory for binary search. An update copies the directory and the
 * chunks it touches and shares the others with the old set, so changing k values of a set of d
 * costs O(d / {@value #MAX_CHUNK} + k·{@value #MAX_CHUNK}) rather than O(d): what keeps the
 * copy-on-write rows of high-degree nodes cheap (the chunked trees of Aspen, Dhulipala, Blelloch,
 * Shun, PLDI 2019, reduced to two levels).
 */
final class SortedChunks {

  /** The most values in one chunk; a chunk that grows past it is split in two. */
  static final int MAX_CHUNK = 64;

  static final SortedChunks EMPTY = new SortedChunks(new int[0][], new int[0], 0, 0);

  private final int[][] chunks; // each sorted, non-empty, at most MAX_CHUNK long
  private final int[] firsts; // firsts[c] == chunks[c][0]
  private final int size;
  private final long chunkBytes; // bytes of the chunk arrays, kept so that bytes() reads none

  private SortedChunks(int[][] chunks, int[] firsts, int size, long chunkBytes) {
    this.chunks = chunks;
    this.firsts = firsts;
    this.size = size;
    this.chunkBytes = chunkBytes;
  }

  /** Chunks {@code values[from..to-1]}, which must be strictly increasing. */
  static SortedChunks of(int[] values, int from, int to) {
    if (from == to) {
      return EMPTY;
    }
    Builder out = new Builder((to - from + MAX_CHUNK - 1) / MAX_CHUNK, 0, 0);
    out.append(Arrays.copyOfRange(values, from, to), to - from);
    return out.build();
  }

  int size() {
    return size;
  }

  int chunkCount() {
    return chunks.length;
  }

  /** Returns chunk {@code c}; callers never modify it. */
  int[] chunk(int c) {
    return chunks[c];
  }

  boolean contains(int value) {
    int c = chunkOf(value);
    return c >= 0 && Arrays.binarySearch(chunks[c], value) >= 0;
  }

  /** Copies every value, in increasing order, into {@code into} from {@code offset}. */
  void copyTo(int[] into, int offset) {
    for (int[] chunk : chunks) {
      System.arraycopy(chunk, 0, into, offset, chunk.length);
      offset += chunk.length;
    }
  }

  /** Bytes of the object, its directory and its chunks. */
  long bytes() {
    return 32
        + Layout.arrayBytes(chunks.length, 4)
        + Layout.arrayBytes(firsts.length, 4)
        + chunkBytes;
  }

  /**
   * Returns this set without the values of {@code drop[0..dropCount-1]} that it holds and with the
   * values of {@code add[0..addCount-1]}, which it must not hold; both lists sorted. Untouched
   * chunks are shared with this set, and are not read: the chunks touched are found by binary
   * search in the directory, and the untouched ones are copied to the new directory by reference
   * with their first values and sizes, so that an update of a long row misses in cache on the
   * chunks it changes only.
   */
  SortedChunks update(int[] drop, int dropCount, int[] add, int addCount) {
    if (dropCount == 0 && addCount == 0) {
      return this;
    }
    if (chunks.length == 0) {
      return of(add, 0, addCount);
    }
    Builder out = new Builder(chunks.length + 4, size, chunkBytes);
    int d = 0;
    int a = 0;
    int c = 0;
    int[] merged = new int[MAX_CHUNK * 2 + addCount];
    while (true) {
      // the next chunk with a change: the one each next value belongs to (below the next first)
      int next = chunks.length;
      if (d < dropCount) {
        next = Math.max(0, chunkOf(drop[d]));
      }
      if (a < addCount) {
        next = Math.min(next, Math.max(0, chunkOf(add[a])));
      }
      out.copy(chunks, firsts, c, next);
      if (next == chunks.length) {
        break;
      }
      c = next;
      int limit = c + 1 < chunks.length ? firsts[c + 1] : Integer.MAX_VALUE;
      int dropEnd = d;
      while (dropEnd < dropCount && drop[dropEnd] < limit) {
        dropEnd++;
      }
      int addEnd = a;
      while (addEnd < addCount && (add[addEnd] < limit || c + 1 == chunks.length)) {
        addEnd++;
      }
      int[] old = chunks[c];
      if (merged.length < old.length + addEnd - a) {
        merged = new int[old.length + addEnd - a];
      }
      int length = merge(old, 0, old.length, drop, d, dropEnd, add, a, addEnd, merged, 0);
      out.drop(old);
      out.append(merged, length);
      d = dropEnd;
      a = addEnd;
      c++;
    }
    return out.build();
  }

  /** The directory of an updated set, filled in order. */
  private static final class Builder {
    private int[][] chunks;
    private int[] firsts;
    private int count;
    private int size;
    private long chunkBytes;

    Builder(int capacity, int size, long chunkBytes) {
      this.chunks = new int[capacity][];
      this.firsts = new int[capacity];
      this.size = size;
      this.chunkBytes = chunkBytes;
    }

    /** Appends old chunks {@code from..to-1} unchanged (not read). */
    void copy(int[][] oldChunks, int[] oldFirsts, int from, int to) {
      room(to - from);
      System.arraycopy(oldChunks, from, chunks, count, to - from);
      System.arraycopy(oldFirsts, from, firsts, count, to - from);
      count += to - from;
    }

    /** Takes the old chunk {@code old} out of the counts; its new content follows by append. */
    void drop(int[] old) {
      size -= old.length;
      chunkBytes -= Layout.arrayBytes(old.length, 4);
    }

    /** Appends {@code values[0..length-1]} as chunks of at most MAX_CHUNK values. */
    void append(int[] values, int length) {
      size += length;
      int pieces = (length + MAX_CHUNK - 1) / MAX_CHUNK;
      room(pieces);
      for (int p = 0; p < pieces; p++) {
        int start = (int) ((long) length * p / pieces);
        int end = (int) ((long) length * (p + 1) / pieces);
        chunks[count] = Arrays.copyOfRange(values, start, end);
        firsts[count++] = values[start];
        chunkBytes += Layout.arrayBytes(end - start, 4);
      }
    }

    SortedChunks build() {
      if (count == 0) {
        return EMPTY;
      }
      return new SortedChunks(
          Arrays.copyOf(chunks, count), Arrays.copyOf(firsts, count), size, chunkBytes);
    }

    private void room(int more) {
      if (count + more > chunks.length) {
        int capacity = Math.max(count + more, 2 * chunks.length);
        chunks = Arrays.copyOf(chunks, capacity);
        firsts = Arrays.copyOf(firsts, capacity);
      }
    }
  }

  /**
   * Writes {@code old[from..to-1]} without the values of {@code drop[0..dropCount-1]} and with
   * those of {@code add[0..addCount-1]} into {@code out} from {@code w}, in increasing order;
   * returns the new end. All three lists are sorted; {@code add} is disjoint from the old values,
   * and drop values that are not among them are skipped.
   */
  static int merge(
      int[] old,
      int from,
      int to,
      int[] drop,
      int dropCount,
      int[] add,
      int addCount,
      int[] out,
      int w) {
    return merge(old, from, to, drop, 0, dropCount, add, 0, addCount, out, w);
  }

  private static int merge(
      int[] old,
      int from,
      int to,
      int[] drop,
      int d,
      int dropEnd,
      int[] add,
      int a,
      int addEnd,
      int[] out,
      int w) {
    int k = from;
    while (k < to || a < addEnd) {
      int v = k < to ? old[k] : Integer.MAX_VALUE;
      int x = a < addEnd ? add[a] : Integer.MAX_VALUE;
      if (v < x) {
        while (d < dropEnd && drop[d] < v) {
          d++;
        }
        if (d < dropEnd && drop[d] == v) {
          d++;
        } else {
          out[w++] = v;
        }
        k++;
      } else {
        out[w++] = x;
        a++;
      }
    }
    return w;
  }

  /** Returns the chunk that would hold {@code value}, or -1 if it is below every chunk. */
  private int chunkOf(int value) {
    int at = Arrays.binarySearch(firsts, value);
    return at >= 0 ? at : -at - 2;
  }
}
