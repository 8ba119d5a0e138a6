package dev.heed.sparse;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CsrGraph;
import dev.heed.sparse.internal.RowMath;
import java.util.Arrays;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;

/**
 * The {@link ComputePath#SPARSE} kernel: one fused pass per target row over a {@link CsrGraph} or a
 * {@link dev.heed.graph.CompletePattern} (all sources, nothing stored), computing scores, a
 * numerically stable softmax and the weighted sum of values without forming the E×H score matrix
 * (see {@link CsrRowPass}). Obtain it with {@code AttentionKernels.forPath(ComputePath.SPARSE,
 * options)}.
 *
 * <p>Cost: O(E·H·(keyDim + valueDim)) time; per thread and call, {@code 128·H·(1 + keyDim) +
 * H·valueDim} floats of scratch (36 KiB for 8 heads of 8 dims, 260 KiB for 8 heads of 64). Each
 * neighbour costs one random access to its key row and one to its value row, since a node's data
 * for all heads is contiguous. For additive scores with 8 heads of 8 value floats over a graph of
 * at least {@value #DEFAULT_MIN_PACKED_TABLE_BYTES} bytes of {@link PackedNodeTable} (about 52k
 * nodes), a call first copies two factors of every node's key terms and its value row into that
 * table (320 bytes per node, one access per neighbour instead of two), and keeps the table for the
 * next call (softly referenced; see {@link PackedNodeTable}). The rows then use factored weights
 * ({@link CsrRowPass}): no exponential per entry.
 *
 * <p>Threads: a call with {@code threads > 1} splits the rows into about {@value
 * #CHUNKS_PER_THREAD} chunks per thread of equal cost, where a row costs its entry count plus one
 * (so power-law degree distributions split evenly); the calling thread and {@code threads - 1}
 * helpers from {@link CsrWorkerPool} claim chunks until none are left. Calls with less than {@value
 * #DEFAULT_MIN_COST_PER_THREAD} cost units per thread use fewer threads (one for small graphs), so
 * small calls never pay for a hand-off. Every row is computed by one thread with arithmetic that
 * depends only on that row, so results are bit-identical for any thread count.
 *
 * <p>Thread safety: immutable apart from the spare packed table, which one call at a time takes;
 * concurrent calls are safe (each has its own scratch and table and waits only for its own
 * helpers).
 */
final class CsrAttentionKernel implements AttentionKernel {

  /** Chunks per thread: enough for dynamic balancing, few enough to keep claiming cheap. */
  static final int CHUNKS_PER_THREAD = 8;

  /** Below this many cost units (entries + rows) per thread, fewer threads are used. */
  static final long DEFAULT_MIN_COST_PER_THREAD = 1L << 14;

  private final int threads;
  private final RowMath math;
  private final long minCostPerThread;
  private final boolean allHeadsAllowed;
  private final long minPackedTableBytes;
  private final boolean factorTable;
  private final PackedNodeTable tables = new PackedNodeTable();

  /**
   * Calls whose {@link PackedNodeTable} would be smaller than this many bytes read the caller's key
   * and value arrays in place (their rows stay in cache, and the copy costs more than it saves).
   */
  static final long DEFAULT_MIN_PACKED_TABLE_BYTES = 16L << 20;

  CsrAttentionKernel(int threads, RowMath math, long minCostPerThread) {
    this(threads, math, minCostPerThread, RowMaths.allHeadsEnabled());
  }

  /**
   * Creates the kernel; {@code allHeadsAllowed = false} keeps every shape on the per-head path
   * (tests and A/B comparisons).
   */
  CsrAttentionKernel(int threads, RowMath math, long minCostPerThread, boolean allHeadsAllowed) {
    this(
        threads,
        math,
        minCostPerThread,
        allHeadsAllowed,
        PackedNodeTable.ENABLED ? DEFAULT_MIN_PACKED_TABLE_BYTES : Long.MAX_VALUE);
  }

  /**
   * Creates the kernel; calls on the all-heads path whose packed node table would have at least
   * {@code minPackedTableBytes} bytes use one ({@code Long.MAX_VALUE}: never; 0: always, for
   * tests).
   */
  CsrAttentionKernel(
      int threads,
      RowMath math,
      long minCostPerThread,
      boolean allHeadsAllowed,
      long minPackedTableBytes) {
    this(threads, math, minCostPerThread, allHeadsAllowed, minPackedTableBytes, FACTOR);
  }

  /**
   * Creates the kernel; {@code factorTable} selects the packed node table's factored layout and
   * weights ({@link CsrRowPass}) over its exact one (tests cover both).
   */
  CsrAttentionKernel(
      int threads,
      RowMath math,
      long minCostPerThread,
      boolean allHeadsAllowed,
      long minPackedTableBytes,
      boolean factorTable) {
    assert threads >= 1 && minCostPerThread >= 1 && minPackedTableBytes >= 0;
    this.threads = threads;
    this.math = math;
    this.minCostPerThread = minCostPerThread;
    this.allHeadsAllowed = allHeadsAllowed;
    this.minPackedTableBytes = minPackedTableBytes;
    this.factorTable = factorTable;
  }

  /** Creates the kernel on the implementation chosen for this JVM. */
  static CsrAttentionKernel create(int threads) {
    return new CsrAttentionKernel(threads, RowMaths.preferred(), DEFAULT_MIN_COST_PER_THREAD);
  }

  /** Returns the name of the inner-loop implementation, {@code "vector(...)"} or "scalar". */
  String implementation() {
    return math.describe();
  }

  @Override
  public ComputePath path() {
    return ComputePath.SPARSE;
  }

  @Override
  public String describe() {
    return "csr-" + math.describe() + ", " + threads + (threads == 1 ? " thread" : " threads");
  }

  @Override
  public void attend(
      AttentionPattern pattern,
      ScoreFunction score,
      HeadShape shape,
      float[] query,
      float[] key,
      float[] value,
      float[] out,
      float[] weights) {
    AttentionKernels.checkCallShapes(pattern, score, shape, query, key, value, out, weights);
    int n = pattern.nodeCount();
    AttentionKernels.checkFinite("query", query, shape.keyWidth());
    float[] table =
        n > 0
                && n <= PackedNodeTable.MAX_NODES
                && PackedNodeTable.bytes(n) >= minPackedTableBytes
                && CsrRowPass.allHeadsOverCsr(math, pattern, score, shape, allHeadsAllowed)
            ? tables.take(n)
            : null;
    if (table == null) {
      // the packed path checks key and value while it copies them
      AttentionKernels.checkFinite("key", key, shape.keyWidth());
      AttentionKernels.checkFinite("value", value, shape.valueWidth());
    }
    if (n == 0) {
      return;
    }
    long cost = pattern.entryCount() + n;
    int useThreads = (int) Math.min(Math.min(threads, n), Math.max(1, cost / minCostPerThread));
    if (table == null) {
      run(
          new CsrRowPass(
              math, pattern, score, shape, query, key, value, out, weights, allHeadsAllowed),
          pattern,
          useThreads);
      return;
    }
    try {
      CsrRowPass pass =
          new CsrRowPass(
              math,
              pattern,
              score,
              shape,
              query,
              key,
              value,
              out,
              weights,
              allHeadsAllowed,
              table,
              factorTable ? keyMaxima(key, n, shape) : null);
      if (!pack(pass, n, useThreads)) {
        // the first bad value, with checkCall's message
        AttentionKernels.checkFinite("key", key, shape.keyWidth());
        AttentionKernels.checkFinite("value", value, shape.valueWidth());
        throw new AssertionError("the packed copy flagged a value that the full check passed");
      }
      run(pass, pattern, useThreads);
    } finally {
      tables.giveBack(table);
    }
  }

  /**
   * Whether calls that use the node table use its factored form ({@link CsrRowPass}); {@code
   * -Dheed.sparse.factor=false} keeps the exact per-row softmax there, for measurements.
   */
  static final boolean FACTOR =
      Boolean.parseBoolean(System.getProperty("heed.sparse.factor", "true"));

  /**
   * Each head's largest key term over all n nodes (the factored table's K), checking every key term
   * for NaN and infinities on the way (the packed copy then checks only the values).
   *
   * @throws IllegalArgumentException for a non-finite key term, with checkCall's message
   */
  private float[] keyMaxima(float[] key, int n, HeadShape shape) {
    float[] keyMax = new float[RowMath.ALL_HEADS];
    Arrays.fill(keyMax, Float.NEGATIVE_INFINITY);
    if (!math.keyMaximaAllHeads(key, 0, n, keyMax)) {
      AttentionKernels.checkFinite("key", key, shape.keyWidth());
      throw new AssertionError("the key maxima flagged a value that the full check passed");
    }
    return keyMax;
  }

  /**
   * Fills the pass's packed node table on {@code useThreads} threads, in equal ranges of nodes.
   *
   * @return true if every key and value float is finite
   */
  private static boolean pack(CsrRowPass pass, int n, int useThreads) {
    if (useThreads == 1) {
      return pass.pack(0, n);
    }
    int chunks = Math.min(n, useThreads * CHUNKS_PER_THREAD);
    AtomicInteger next = new AtomicInteger();
    AtomicBoolean finite = new AtomicBoolean(true);
    CsrWorkerPool.runShared(
        useThreads - 1,
        () -> {
          for (int c = next.getAndIncrement(); c < chunks; c = next.getAndIncrement()) {
            if (!pass.pack((int) ((long) n * c / chunks), (int) ((long) n * (c + 1) / chunks))) {
              finite.set(false);
            }
          }
        });
    return finite.get();
  }

  /** Runs every row of the pass on {@code useThreads} threads. */
  private static void run(CsrRowPass pass, AttentionPattern pattern, int useThreads) {
    int n = pattern.nodeCount();
    if (useThreads == 1) {
      pass.run(0, n, pass.newScratch());
      return;
    }
    int[] bounds = partitionRows(pattern, Math.min(n, useThreads * CHUNKS_PER_THREAD));
    int chunks = bounds.length - 1;
    AtomicInteger next = new AtomicInteger();
    CsrWorkerPool.runShared(
        useThreads - 1,
        () -> {
          CsrRowPass.Scratch scratch = null;
          for (int c = next.getAndIncrement(); c < chunks; c = next.getAndIncrement()) {
            if (scratch == null) {
              scratch = pass.newScratch();
            }
            pass.run(bounds[c], bounds[c + 1], scratch);
          }
        });
  }

  /**
   * Splits rows {@code 0..n-1} into at most {@code chunks} consecutive ranges of about equal cost,
   * where row {@code i} costs {@code degree(i) + 1}. Range {@code c} is {@code bounds[c] ..
   * bounds[c+1]-1}; a row is never split, so one heavy row forms a range on its own. Empty ranges
   * are dropped.
   *
   * @return strictly increasing bounds starting at 0 and ending at n
   */
  static int[] partitionRows(AttentionPattern pattern, int chunks) {
    int n = pattern.nodeCount();
    assert n >= 1 && chunks >= 1;
    CsrGraph csr = pattern instanceof CsrGraph g ? g : null;
    long total = costBefore(csr, n, n);
    int[] bounds = new int[chunks + 1];
    int used = 0;
    for (int c = 1; c < chunks; c++) {
      long target = total * c / chunks;
      // smallest row r with costBefore(r) >= target
      int lo = bounds[used];
      int hi = n;
      while (lo < hi) {
        int mid = (lo + hi) >>> 1;
        if (costBefore(csr, n, mid) < target) {
          lo = mid + 1;
        } else {
          hi = mid;
        }
      }
      if (lo > bounds[used] && lo < n) {
        bounds[++used] = lo;
      }
    }
    bounds[++used] = n;
    return Arrays.copyOf(bounds, used + 1);
  }

  /** Cost of rows 0..row-1: their entries plus one per row. */
  private static long costBefore(CsrGraph csr, int n, int row) {
    long entries =
        csr == null ? (long) row * n : row == n ? csr.edgeCount() : (long) csr.rowStart(row);
    return entries + row;
  }
}
