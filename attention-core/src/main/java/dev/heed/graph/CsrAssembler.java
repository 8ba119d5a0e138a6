package dev.heed.graph;

import dev.heed.attention.MemoryBudget;
import java.util.Arrays;

/**
 * Turns a replayable edge stream into a validated {@link CsrGraph} with O(n + E) work and no
 * comparison sort of all edges.
 *
 * <p>Steps: (1) count the entries of every row; (2) prefix sums give each row's end; (3) a second
 * pass places every source into its row from the end backwards (a counting sort by target, so row
 * {@code i} then starts at {@code offsets[i]}); (4) each row is sorted on its own, by insertion for
 * short rows (at most {@link #INSERTION_SORT_LIMIT} entries, so bounded work per entry) and by LSD
 * radix sort on 8-bit digits for longer ones; (5) one sweep merges or rejects duplicates and
 * compacts in place. The only arrays of size E are the columns (plus one trimmed copy when more
 * than 1/{@value #MAX_TAIL_DIVISOR} of them were merged away; a smaller unused tail is kept
 * instead); the only arrays of size n are the offsets.
 */
final class CsrAssembler {

  /** Rows up to this length are sorted by insertion; longer rows by radix sort. */
  static final int INSERTION_SORT_LIMIT = 48;

  /**
   * Merging may leave unused entries at the end of the column array. Up to 1/8 of the array they
   * stay there (no copy, so the build's peak stays at the finished size); beyond that the columns
   * are copied once to their exact size.
   */
  static final int MAX_TAIL_DIVISOR = 8;

  /** The largest number of entries a graph can hold (Java array limit, common practice). */
  static final int MAX_ENTRIES = Integer.MAX_VALUE - 8;

  private CsrAssembler() {}

  static CsrGraph assemble(
      EdgeSource source,
      int initialNodeCapacity,
      SelfLoopPolicy selfLoops,
      DirectionPolicy direction,
      DuplicatePolicy duplicates) {
    boolean symmetrise = direction == DirectionPolicy.SYMMETRISE;
    boolean addSelfLoops = selfLoops == SelfLoopPolicy.ADD;

    // Pass 1: count the entries of every row.
    Counter counter = new Counter(Math.max(initialNodeCapacity, 0) + 1, symmetrise);
    source.forEachEdge(counter);
    int n = source.nodeCount();
    int[] offsets = counter.counts.length == n + 1 ? counter.counts : resize(counter, n);
    long total = counter.total + (addSelfLoops ? n : 0);
    if (total > MAX_ENTRIES) {
      throw tooManyEntries(total);
    }
    int running = 0;
    int maxRow = 0;
    for (int i = 0; i < n; i++) {
      int c = offsets[i] + (addSelfLoops ? 1 : 0);
      maxRow = Math.max(maxRow, c);
      running += c;
      offsets[i] = running; // end of row i
    }
    offsets[n] = running;
    int entries = running;

    // Pass 2: place each source at the end of its row, moving backwards.
    int[] columns = allocate("the graph's column array (" + entries + " entries)", entries);
    Filler filler = new Filler(offsets, columns, symmetrise);
    try {
      source.forEachEdge(filler);
    } catch (ArrayIndexOutOfBoundsException e) {
      throw changedBetweenPasses(source);
    }
    if (filler.checksum != counter.checksum || filler.count != counter.count) {
      throw changedBetweenPasses(source);
    }
    if (addSelfLoops) {
      for (int i = 0; i < n; i++) {
        columns[--offsets[i]] = i;
      }
    }
    // offsets[i] is now the start of row i and offsets[n] == entries.
    if (n > 0 && offsets[0] != 0) {
      throw changedBetweenPasses(source);
    }

    // Sort each row, then merge or reject duplicates while compacting.
    int bits = 32 - Integer.numberOfLeadingZeros(Math.max(n - 1, 1));
    RowSorter sorter = new RowSorter(maxRow, bits);
    boolean reject = duplicates == DuplicatePolicy.REJECT;
    int write = 0;
    for (int row = 0; row < n; row++) {
      int start = offsets[row];
      int end = offsets[row + 1];
      sorter.sort(columns, start, end);
      offsets[row] = write;
      int previous = -1;
      int run = 0;
      for (int e = start; e < end; e++) {
        int c = columns[e];
        if (c == previous) {
          run++;
          int allowed = addSelfLoops && c == row ? 2 : 1;
          if (reject && run > allowed) {
            throw duplicate(source, c, row, symmetrise);
          }
          continue;
        }
        previous = c;
        run = 1;
        columns[write++] = c;
      }
    }
    offsets[n] = write;
    if (columns.length - write > columns.length / MAX_TAIL_DIVISOR) {
      columns = Arrays.copyOf(columns, write);
    }
    return CsrGraph.adopt(offsets, columns);
  }

  /** One input-sized array, checked against the heap budget first (see {@link MemoryBudget}). */
  static int[] allocate(String what, int length) {
    long bytes = 16 + 4L * length;
    MemoryBudget.check(what, bytes);
    try {
      return new int[length];
    } catch (OutOfMemoryError e) {
      throw MemoryBudget.exceeded(what, bytes);
    }
  }

  private static int[] resize(Counter counter, int n) {
    for (int i = n; i < counter.counts.length; i++) {
      assert counter.counts[i] == 0 : "edge to node " + i + " beyond node count " + n;
    }
    return Arrays.copyOf(counter.counts, n + 1);
  }

  private static IllegalArgumentException tooManyEntries(long total) {
    return new IllegalArgumentException(
        "the graph would have "
            + total
            + " entries, more than the "
            + MAX_ENTRIES
            + " a CSR graph can hold; split the graph or keep direction instead of symmetrising");
  }

  private static IllegalStateException changedBetweenPasses(EdgeSource source) {
    return new IllegalStateException(
        "the edges changed between the two passes over the input ("
            + source.describePosition(-1)
            + "); do not modify the input while a graph is being built from it");
  }

  /** Replays the input to find the first two places where the edge was given. */
  private static IllegalArgumentException duplicate(
      EdgeSource source, int from, int to, boolean symmetrise) {
    long[] found = {-1, -1};
    source.forEachEdge(
        (position, s, t) -> {
          boolean same = (s == from && t == to) || (symmetrise && s == to && t == from);
          if (same && found[1] < 0) {
            if (found[0] < 0) {
              found[0] = position;
            } else {
              found[1] = position;
            }
          }
        });
    String edge =
        symmetrise && from != to
            ? "undirected edge {"
                + source.describeNode(Math.min(from, to))
                + ", "
                + source.describeNode(Math.max(from, to))
                + "}"
            : "edge " + source.describeNode(from) + " -> " + source.describeNode(to);
    String where =
        found[1] >= 0
            ? ": given at "
                + source.describePosition(found[0])
                + " and again at "
                + source.describePosition(found[1])
            : "";
    return new IllegalArgumentException(
        "duplicate "
            + edge
            + where
            + "; remove the repeat or build with DuplicatePolicy.MERGE to merge repeated edges");
  }

  /** Pass 1: per-row counts, in an array that grows when the source reveals more nodes. */
  private static final class Counter implements EdgeSource.Visitor {
    private final boolean symmetrise;
    int[] counts;
    long total;
    long count;
    long checksum;

    Counter(int capacity, boolean symmetrise) {
      this.counts = allocate("the graph's row counts (" + capacity + " nodes)", capacity);
      this.symmetrise = symmetrise;
    }

    @Override
    public void edge(long position, int source, int target) {
      int high = Math.max(source, target);
      if (high >= counts.length - 1) {
        int length = (int) Math.min(MAX_ENTRIES, Math.max(high + 2L, counts.length * 3L / 2));
        int[] grown = allocate("the graph's row counts (" + length + " nodes)", length);
        System.arraycopy(counts, 0, grown, 0, counts.length);
        counts = grown;
      }
      counts[target]++;
      total++;
      if (symmetrise && source != target) {
        counts[source]++;
        total++;
      }
      if (total > MAX_ENTRIES) {
        throw tooManyEntries(total);
      }
      count++;
      checksum = checksum * 0x9E3779B97F4A7C15L + (((long) source << 32) ^ target);
    }
  }

  /** Pass 2: counting-sort placement, from each row's end backwards. */
  private static final class Filler implements EdgeSource.Visitor {
    private final int[] offsets;
    private final int[] columns;
    private final boolean symmetrise;
    long count;
    long checksum;

    Filler(int[] offsets, int[] columns, boolean symmetrise) {
      this.offsets = offsets;
      this.columns = columns;
      this.symmetrise = symmetrise;
    }

    @Override
    public void edge(long position, int source, int target) {
      columns[--offsets[target]] = source;
      if (symmetrise && source != target) {
        columns[--offsets[source]] = target;
      }
      count++;
      checksum = checksum * 0x9E3779B97F4A7C15L + (((long) source << 32) ^ target);
    }
  }
}
