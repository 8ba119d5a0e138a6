package dev.heed.sparse.internal;

import dev.heed.attention.internal.KernelWorkers;
import dev.heed.graph.CsrGraph;
import java.lang.ref.WeakReference;
import java.util.BitSet;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * Which nodes' rows of the packed node table a call over a CSR graph reads: the sources of rows of
 * two or more entries. A row of one entry copies its source's value row from the caller's array
 * (exact floats), so a node read by no longer row needs no table row, and the kernel skips it when
 * it fills the table (its inputs are still checked). On a Graph500 R-MAT graph of 1M nodes with
 * self-loops, 38 % of the nodes are such (their own row of one entry is all that reads them).
 *
 * <p>Finding them reads every column once (R-MAT 1M nodes, 17.1M entries: 30 ms on one thread), so
 * the answer is kept per graph: a small cache, shared by every kernel of the JVM, of the last
 * {@value #SLOTS} graphs by identity (a graph is immutable), each held weakly with its node set
 * ({@code n / 8} bytes). The kernel asks only for graphs of at least {@value #MIN_NODES} nodes:
 * below that the table stays in the caches and the rows skipped save too little to pay for the
 * pass.
 *
 * <p>Thread safety: safe for concurrent calls; the sets handed out are never modified.
 */
final class TableRowReads {

  /** Fewest nodes for which the kernel skips unread rows: a bfloat16 table of 12 MiB. */
  static final int MIN_NODES = 1 << 16;

  /** Graphs remembered: a few models' layers over a few graphs. */
  static final int SLOTS = 4;

  private static final Entry[] CACHE = new Entry[SLOTS];
  private static int nextSlot;

  private TableRowReads() {}

  private record Entry(WeakReference<CsrGraph> graph, BitSet read) {}

  /**
   * Returns the nodes whose table rows rows of two or more entries read, computed on the first call
   * for a graph (on up to {@code threads} threads) and remembered after.
   *
   * @param graph the call's graph
   * @param threads threads the computation may use, the calling thread included
   * @return the set of those nodes; not to be modified
   */
  static BitSet of(CsrGraph graph, int threads) {
    synchronized (CACHE) {
      for (Entry e : CACHE) {
        if (e != null && e.graph().get() == graph) {
          return e.read();
        }
      }
    }
    BitSet read = compute(graph, threads);
    synchronized (CACHE) {
      CACHE[nextSlot] = new Entry(new WeakReference<>(graph), read);
      nextSlot = (nextSlot + 1) % SLOTS;
    }
    return read;
  }

  /**
   * The sources of every row of two or more entries: one pass over the graph's columns, in ranges
   * of rows on up to {@code threads} threads, each thread marking a set of its own (merged after).
   */
  static BitSet compute(CsrGraph graph, int threads) {
    int n = graph.nodeCount();
    int words = (n + 63) >>> 6;
    long[] merged = new long[words];
    if (threads == 1 || n < 2) {
      mark(graph, 0, n, merged);
      return BitSet.valueOf(merged);
    }
    int chunks = Math.min(n, threads * CsrAttentionKernel.CHUNKS_PER_THREAD);
    AtomicInteger next = new AtomicInteger();
    KernelWorkers.runShared(
        threads - 1,
        () -> {
          long[] mine = null;
          for (int c = next.getAndIncrement(); c < chunks; c = next.getAndIncrement()) {
            if (mine == null) {
              mine = new long[words];
            }
            mark(graph, (int) ((long) n * c / chunks), (int) ((long) n * (c + 1) / chunks), mine);
          }
          if (mine != null) {
            synchronized (merged) {
              for (int w = 0; w < words; w++) {
                merged[w] |= mine[w];
              }
            }
          }
        });
    return BitSet.valueOf(merged);
  }

  /** Marks the sources of rows {@code from..to-1} that have two or more entries. */
  private static void mark(CsrGraph graph, int from, int to, long[] words) {
    int end = graph.rowStart(from);
    for (int i = from; i < to; i++) {
      int start = end;
      end = graph.rowEnd(i);
      if (end - start >= 2) {
        for (int e = start; e < end; e++) {
          int c = graph.column(e);
          words[c >>> 6] |= 1L << c;
        }
      }
    }
  }
}
