package dev.heed.live;

import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;

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

  static final SortedChunks EMPTY = new SortedChunks(new int[0][], new int[0], 0);

  private final int[][] chunks; // each sorted, non-empty, at most MAX_CHUNK long
  private final int[] firsts; // firsts[c] == chunks[c][0]
  private final int size;

  private SortedChunks(int[][] chunks, int[] firsts, int size) {
    this.chunks = chunks;
    this.firsts = firsts;
    this.size = size;
  }

  /** Chunks {@code values[from..to-1]}, which must be strictly increasing. */
  static SortedChunks of(int[] values, int from, int to) {
    if (from == to) {
      return EMPTY;
    }
    int count = (to - from + MAX_CHUNK - 1) / MAX_CHUNK;
    int[][] chunks = new int[count][];
    int[] firsts = new int[count];
    for (int c = 0; c < count; c++) {
      int start = from + (int) ((long) (to - from) * c / count);
      int end = from + (int) ((long) (to - from) * (c + 1) / count);
      chunks[c] = Arrays.copyOfRange(values, start, end);
      firsts[c] = values[start];
    }
    return new SortedChunks(chunks, firsts, to - from);
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
    long bytes = 16 + Layout.arrayBytes(chunks.length, 4) + Layout.arrayBytes(firsts.length, 4);
    for (int[] chunk : chunks) {
      bytes += Layout.arrayBytes(chunk.length, 4);
    }
    return bytes;
  }

  /**
   * Returns this set without the values of {@code drop[0..dropCount-1]} that it holds and with the
   * values of {@code add[0..addCount-1]}, which it must not hold; both lists sorted. Untouched
   * chunks are shared with this set.
   */
  SortedChunks update(int[] drop, int dropCount, int[] add, int addCount) {
    if (dropCount == 0 && addCount == 0) {
      return this;
    }
    List<int[]> out = new ArrayList<>(chunks.length + 2);
    int d = 0;
    int a = 0;
    int[] merged = new int[MAX_CHUNK * 2 + addCount];
    for (int c = 0; c < chunks.length; c++) {
      // the values that belong to chunk c: below the next chunk's first value
      int limit = c + 1 < chunks.length ? firsts[c + 1] : Integer.MAX_VALUE;
      int dropEnd = d;
      while (dropEnd < dropCount && drop[dropEnd] < limit) {
        dropEnd++;
      }
      int addEnd = a;
      while (addEnd < addCount && (add[addEnd] < limit || c + 1 == chunks.length)) {
        addEnd++;
      }
      if (dropEnd == d && addEnd == a) {
        out.add(chunks[c]);
        continue;
      }
      if (merged.length < chunks[c].length + addEnd - a) {
        merged = new int[chunks[c].length + addEnd - a];
      }
      int length =
          merge(chunks[c], 0, chunks[c].length, drop, d, dropEnd, add, a, addEnd, merged, 0);
      split(merged, length, out);
      d = dropEnd;
      a = addEnd;
    }
    if (chunks.length == 0) {
      split(Arrays.copyOf(add, addCount), addCount, out);
    }
    int[][] newChunks = out.toArray(new int[0][]);
    int[] newFirsts = new int[newChunks.length];
    int newSize = 0;
    for (int c = 0; c < newChunks.length; c++) {
      newFirsts[c] = newChunks[c][0];
      newSize += newChunks[c].length;
    }
    return new SortedChunks(newChunks, newFirsts, newSize);
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

  /** Appends {@code values[0..length-1]} as one or more chunks of at most MAX_CHUNK values. */
  private static void split(int[] values, int length, List<int[]> out) {
    int pieces = (length + MAX_CHUNK - 1) / MAX_CHUNK;
    for (int p = 0; p < pieces; p++) {
      int start = (int) ((long) length * p / pieces);
      int end = (int) ((long) length * (p + 1) / pieces);
      out.add(Arrays.copyOfRange(values, start, end));
    }
  }

  /** Returns the chunk that would hold {@code value}, or -1 if it is below every chunk. */
  private int chunkOf(int value) {
    int at = Arrays.binarySearch(firsts, value);
    return at >= 0 ? at : -at - 2;
  }
}
