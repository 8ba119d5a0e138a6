package dev.heed.model;

import java.util.Arrays;
import java.util.concurrent.ConcurrentLinkedQueue;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * Reusable working memory for planning one receptive field ({@link FieldPlanner}): the map from
 * global to local node ids, the local-to-global ids with the target each node was first reached
 * from, a row buffer, and the growing local CSR rows. Every array grows on demand and is reused, so
 * a call allocates in proportion to its field only when it is the largest seen so far.
 *
 * <p>Why a pool rather than per-thread scratch: a classifier may be called from many short-lived or
 * virtual threads, where a per-thread copy would be created again and again and kept alive by every
 * thread; a pool holds only as many scratches as calls ran at once. A call takes one with {@link
 * #borrow()} and gives it back with {@link #release} when planning ends (before any layer runs), so
 * no two calls ever share one. The pool keeps at most {@link #MAX_POOLED} of them, and drops rather
 * than keeps one that grew past {@link #MAX_RETAINED_INTS} ints in all (a call with a huge field
 * then does not pin its memory for the rest of the process).
 *
 * <p>Thread safety: a scratch is confined to one call; the pool itself is thread safe.
 */
final class FieldScratch {

  /** Most scratches kept for reuse: twice the processors (common practice for pools). */
  static final int MAX_POOLED = 2 * Runtime.getRuntime().availableProcessors();

  /** Largest scratch kept for reuse, in ints over all its arrays: 4 Mi ints (16 MiB). */
  static final long MAX_RETAINED_INTS = 1L << 22;

  private static final ConcurrentLinkedQueue<FieldScratch> POOL = new ConcurrentLinkedQueue<>();
  private static final AtomicInteger POOLED = new AtomicInteger();

  final LocalIdMap ids = new LocalIdMap(1 << 10);

  /** Global id of each local node, in local order. */
  int[] globalIds = new int[1 << 10];

  /** Index (among the distinct targets) of the target each local node was first reached from. */
  int[] origins = new int[1 << 10];

  /** Local CSR row offsets: row v occupies columns[offsets[v] .. offsets[v + 1]). */
  int[] offsets = new int[(1 << 10) + 1];

  /** Local CSR columns (local source ids, sorted within each row). */
  int[] columns = new int[1 << 12];

  /** One global row as the graph gives it. */
  int[] row = new int[1 << 8];

  /** Global id of each kept node (fields planned with kept hub rows), in the order met. */
  int[] keptGlobals = new int[1 << 4];

  /** The kept sources of one row, as local ids with the kept flag. */
  int[] keptRow = new int[1 << 4];

  private FieldScratch() {}

  /** Takes a scratch from the pool, or creates one; clears its id map. */
  static FieldScratch borrow() {
    FieldScratch s = POOL.poll();
    if (s == null) {
      s = new FieldScratch();
    } else {
      POOLED.decrementAndGet();
    }
    s.ids.clear();
    return s;
  }

  /** Gives a scratch back to the pool, unless the pool is full or the scratch grew too large. */
  static void release(FieldScratch s) {
    if (s.retainedInts() > MAX_RETAINED_INTS) {
      return;
    }
    if (POOLED.incrementAndGet() <= MAX_POOLED) {
      POOL.offer(s);
    } else {
      POOLED.decrementAndGet();
    }
  }

  private long retainedInts() {
    return 5L * ids.capacity() / 2
        + globalIds.length
        + origins.length
        + offsets.length
        + columns.length
        + row.length
        + keptGlobals.length
        + keptRow.length;
  }

  /** Makes room for {@code nodes} local nodes (ids, origins and row offsets). */
  void ensureNodes(int nodes) {
    if (nodes > globalIds.length) {
      int size = grownSize(globalIds.length, nodes);
      globalIds = Arrays.copyOf(globalIds, size);
      origins = Arrays.copyOf(origins, size);
    }
    if (nodes + 1 > offsets.length) {
      offsets = Arrays.copyOf(offsets, grownSize(offsets.length, nodes + 1));
    }
  }

  /** Makes room for {@code entries} local CSR columns. */
  void ensureColumns(int entries) {
    if (entries > columns.length) {
      columns = Arrays.copyOf(columns, grownSize(columns.length, entries));
    }
  }

  /** Makes room for {@code nodes} kept nodes. */
  void ensureKept(int nodes) {
    if (nodes > keptGlobals.length) {
      keptGlobals = Arrays.copyOf(keptGlobals, grownSize(keptGlobals.length, nodes));
    }
  }

  /** Makes room for {@code length} kept sources of one row. */
  void ensureKeptRow(int length) {
    if (length > keptRow.length) {
      keptRow = Arrays.copyOf(keptRow, grownSize(keptRow.length, length));
    }
  }

  /** Makes room for one row of {@code length} ids. */
  void ensureRow(int length) {
    if (length > row.length) {
      row = new int[grownSize(row.length, length)];
    }
  }

  private static int grownSize(int current, int needed) {
    long size = Math.max((long) needed, 2L * current);
    return (int) Math.min(size, Integer.MAX_VALUE - 8);
  }
}
