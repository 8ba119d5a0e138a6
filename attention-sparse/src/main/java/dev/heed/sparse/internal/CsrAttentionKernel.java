package dev.heed.sparse.internal;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.FiniteScan;
import dev.heed.attention.internal.FiniteScans;
import dev.heed.attention.internal.KernelWorkers;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.BitSet;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicInteger;
import java.util.concurrent.atomic.AtomicLong;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The {@link ComputePath#SPARSE} kernel: one fused pass per target row over a {@link CsrGraph} or a
 * {@link dev.heed.graph.CompletePattern} (all sources, nothing stored), computing scores, a
 * numerically stable softmax and the weighted sum of values without forming the E×H score matrix.
 * Internal: applications obtain it with {@code AttentionKernels.forPath(ComputePath.SPARSE,
 * options)}; tests and benchmarks create variants with {@link #create(int, CsrKernelVariant)}.
 *
 * <p>Each call chooses one pass once, before any row runs: {@link FactoredAllHeadsPass} for
 * additive scores with 8 heads of 8 value floats over a CSR graph of at least {@link
 * CsrKernelVariant#DEFAULT_MIN_PACKED_TABLE_BYTES} bytes of {@link PackedNodeTable} (about 52k
 * nodes), after copying two factors of every node's key terms and its value row into that table
 * (320 bytes per node, one access per neighbour instead of two; the table is kept for the next
 * call, softly referenced); {@link ExactAllHeadsPass} for that score and shape otherwise; {@link
 * PerHeadPass} for every other score and shape.
 *
 * <p>With a plain start ({@link CsrKernelVariant#plainStartWork()}), a JVM's first calls run the
 * plain Java loops on the per-head path, until the work of the calls so far passes the variant's
 * limit; the Vector API loops run every call after that.
 *
 * <p>With {@link dev.heed.attention.NodeRowPrecision#BFLOAT16} ({@link
 * CsrKernelVariant#nodeRows()}) the factored table holds value rows rounded to bfloat16 (192 bytes
 * per node instead of 320) and is used at every graph size.
 *
 * <p>Cost: O(E·H·(keyDim + valueDim)) time; per thread and call, {@code 128·H·(1 + keyDim) +
 * H·valueDim} floats of scratch (36 KiB for 8 heads of 8 dims, 260 KiB for 8 heads of 64), eight
 * times that over the complete pattern (its rows run in tiles of 8), plus {@code n·H·keyDim} floats
 * per call for scaled dot-product scores over the complete pattern (the keys transposed, {@link
 * KeyColumns}). Each neighbour costs one random access to its key row and one to its value row,
 * since a node's data for all heads is contiguous.
 *
 * <p>Threads: a call with {@code threads > 1} runs its input checks, the factored table's key
 * maxima and the table's fill in ranges of nodes on its threads, then splits the rows into about
 * {@value #CHUNKS_PER_THREAD} chunks per thread of equal cost, where a row costs its entry count
 * plus one (so power-law degree distributions split evenly); the calling thread and {@code threads
 * - 1} helpers from {@link KernelWorkers} (one JVM-wide pool shared by every kernel) claim chunks
 * until none are left. Calls with less than {@link CsrKernelVariant#minCostPerThread()} cost units
 * per thread use fewer threads (one for small graphs), so small calls never pay for a hand-off.
 * Every row is computed by one thread with arithmetic that depends only on that row, so results are
 * bit-identical for any thread count.
 *
 * <p>Thread safety: immutable apart from the spare packed table, which one call at a time takes;
 * concurrent calls are safe (each has its own scratch and table and waits only for its own
 * helpers).
 */
public final class CsrAttentionKernel implements AttentionKernel {

  /**
   * Chunks per thread: enough for dynamic balancing, few enough to keep claiming cheap. With 8, on
   * the R-MAT 1M layer in reverse Cuthill–McKee order one thread finished its last chunk 14–18 ms
   * (of ~150) before the other; with 64 the call ran 3 % faster (alternated calls in one JVM).
   */
  static final int CHUNKS_PER_THREAD = 64;

  private static final FiniteScan FINITE = FiniteScans.preferred();

  private static final Logger LOG = LoggerFactory.getLogger(CsrAttentionKernel.class);

  /**
   * Entries × heads of this JVM's calls so far, counted by kernels with a plain start: the JIT's
   * state, which the plain start is about, belongs to the JVM, not to one kernel.
   */
  private static final AtomicLong STARTED_WORK = new AtomicLong();

  private final int threads;
  private final RowMath math;
  private final CsrKernelVariant variant;
  private final PackedNodeTable tables = new PackedNodeTable();

  /**
   * Creates the kernel on the given inner loops; {@code variant.vectorLoops()} is not consulted
   * (tests pass either implementation directly).
   */
  CsrAttentionKernel(int threads, RowMath math, CsrKernelVariant variant) {
    assert threads >= 1;
    this.threads = threads;
    this.math = math;
    this.variant = variant;
  }

  /**
   * Creates the default kernel, as {@code AttentionKernels.forPath(ComputePath.SPARSE, options)}
   * does.
   *
   * @param threads threads per call, the calling thread included, at least 1
   * @return a new kernel
   * @throws IllegalArgumentException if {@code threads < 1}
   */
  public static CsrAttentionKernel create(int threads) {
    return create(threads, CsrKernelVariant.DEFAULT);
  }

  /**
   * Creates a kernel that runs the given variant (tests and A/B benchmarks).
   *
   * @param threads threads per call, the calling thread included, at least 1
   * @param variant which parts of the kernel are on
   * @return a new kernel
   * @throws IllegalArgumentException if {@code threads < 1}
   */
  public static CsrAttentionKernel create(int threads, CsrKernelVariant variant) {
    if (threads < 1) {
      throw new IllegalArgumentException("threads must be at least 1, got " + threads);
    }
    RowMath math = variant.vectorLoops() ? RowMaths.preferred() : RowMaths.scalar();
    return new CsrAttentionKernel(threads, math, variant);
  }

  /**
   * Returns {@link ComputePath#SPARSE}.
   *
   * @return the sparse path
   */
  @Override
  public ComputePath path() {
    return ComputePath.SPARSE;
  }

  /**
   * Returns the inner loops and thread count, for example {@code "csr-vector(256-bit of preferred
   * 512-bit), 2 threads"}.
   *
   * @return the description
   */
  @Override
  public String describe() {
    return "csr-" + math.name() + ", " + threads + (threads == 1 ? " thread" : " threads");
  }

  /**
   * Whether calls with this score and shape take the all-heads path (exact or factored) rather than
   * the per-head one.
   */
  boolean takesAllHeadsPath(ScoreFunction score, HeadShape shape) {
    return takesAllHeadsPath(math, score, shape);
  }

  private boolean takesAllHeadsPath(RowMath loops, ScoreFunction score, HeadShape shape) {
    return variant.allHeads() && loops.servesAllHeads() && AllHeadsPass.applies(score, shape);
  }

  /**
   * Computes attention over the pattern; see {@link AttentionKernel#attend} for the arguments,
   * their shapes and roles, and the checks and exceptions. Runs on up to {@code threads} threads.
   */
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
    RowMath loops = loopsFor(pattern, shape);
    boolean allHeads = takesAllHeadsPath(loops, score, shape);
    // bfloat16 rows are rounded while the table is filled, so they use a table at any size
    // (unless tables are off)
    boolean bfloat16 = variant.bfloat16Rows();
    float[] table =
        allHeads
                && pattern instanceof CsrGraph
                && n > 0
                && n <= PackedNodeTable.MAX_NODES
                && (bfloat16 || PackedNodeTable.bytes(n) >= variant.minPackedTableBytes())
            ? tables.take(
                n, bfloat16 ? PackedNodeTable.bfloat16Length(n) : PackedNodeTable.length(n))
            : null;
    if (table == null) {
      // the packed path checks these on the call's threads (the key maxima and the copy)
      AttentionKernels.checkFinite("query", query, shape.keyWidth());
      AttentionKernels.checkFinite("key", key, shape.keyWidth());
      AttentionKernels.checkFinite("value", value, shape.valueWidth());
    }
    if (n == 0) {
      return;
    }
    long cost = pattern.entryCount() + n;
    int useThreads =
        (int) Math.min(Math.min(threads, n), Math.max(1, cost / variant.minCostPerThread()));
    CsrCall call = new CsrCall(pattern, score, shape, query, key, value, out, weights);
    if (table == null) {
      run(
          allHeads
              ? new ExactAllHeadsPass(call, loops, variant.prefetch(), null, null)
              : PerHeadPass.of(call, loops.perHead(), variant.prefetch()),
          pattern,
          useThreads);
      return;
    }
    HugePageAdvice.considerOnce(
        4L * (bfloat16 ? PackedNodeTable.bfloat16Length(n) : PackedNodeTable.length(n)), n);
    try {
      boolean factored = variant.factoredWeights();
      float[] keyMax = checkQueryAndKeyMaxima(loops, query, key, n, shape, factored, useThreads);
      BitSet tableReads =
          n >= TableRowReads.MIN_NODES ? TableRowReads.of((CsrGraph) pattern, useThreads) : null;
      AllHeadsPass pass =
          factored
              ? new FactoredAllHeadsPass(
                  call, loops, variant.prefetch(), table, keyMax, bfloat16, tableReads)
              : new ExactAllHeadsPass(call, loops, variant.prefetch(), table, tableReads);
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

  /** Entries × heads of this JVM's calls so far that kernels with a plain start counted (tests). */
  static long startedWork() {
    return STARTED_WORK.get();
  }

  /**
   * The loops for one call: the plain ones while this JVM's work so far, this call's included, is
   * within the variant's plain start (never for bfloat16 rows, which only the table gives), the
   * kernel's own otherwise.
   */
  RowMath loopsFor(AttentionPattern pattern, HeadShape shape) {
    long limit = variant.plainStartWork();
    if (limit == 0
        || variant.bfloat16Rows()
        || STARTED_WORK.get() > limit
        || math == RowMaths.scalar()) {
      return math;
    }
    long entries = pattern.entryCount();
    long work = entries > Long.MAX_VALUE / shape.heads() ? Long.MAX_VALUE : entries * shape.heads();
    long after =
        STARTED_WORK.accumulateAndGet(
            work, (a, b) -> a > Long.MAX_VALUE - b ? Long.MAX_VALUE : a + b);
    if (after > limit) {
      return math;
    }
    LOG.debug(
        "CSR attention: plain loops for a call of {} entries x heads ({} of the plain start's {})",
        work,
        after,
        limit);
    return RowMaths.scalar();
  }

  /**
   * Checks the query for NaN and infinities and, for the factored path, finds each head's largest
   * key term over all n nodes (the factored table's K), checking every key term on the way (the
   * packed copy then checks only the values); on {@code useThreads} threads, in ranges of nodes
   * whose maxima are merged after (a maximum does not depend on the order: the same bits).
   *
   * @return the key maxima, or null if not {@code factored}
   * @throws IllegalArgumentException for a non-finite query or key term, with checkCall's message
   */
  private static float[] checkQueryAndKeyMaxima(
      RowMath math,
      float[] query,
      float[] key,
      int n,
      HeadShape shape,
      boolean factored,
      int useThreads) {
    int chunks = nodeChunks(n, useThreads);
    int width = shape.keyWidth();
    float[][] maxima = new float[chunks][];
    AtomicBoolean queryFinite = new AtomicBoolean(true);
    AtomicBoolean keyFinite = new AtomicBoolean(true);
    forEachNodeRange(
        n,
        useThreads,
        (chunk, from, to) -> {
          if (!FINITE.isFinite(query, from * width, to * width)) {
            queryFinite.set(false);
          }
          if (factored) {
            float[] max = new float[AllHeadsMath.HEADS];
            Arrays.fill(max, Float.NEGATIVE_INFINITY);
            if (!math.factored().keyMaxima(key, from, to, max)) {
              keyFinite.set(false);
            }
            maxima[chunk] = max;
          }
        });
    if (!queryFinite.get()) {
      AttentionKernels.checkFinite("query", query, width);
      throw new AssertionError("the query check flagged a value that the full check passed");
    }
    if (!keyFinite.get()) {
      AttentionKernels.checkFinite("key", key, width);
      throw new AssertionError("the key maxima flagged a value that the full check passed");
    }
    if (!factored) {
      return null;
    }
    float[] keyMax = maxima[0];
    for (int c = 1; c < chunks; c++) {
      for (int h = 0; h < AllHeadsMath.HEADS; h++) {
        keyMax[h] = Math.max(keyMax[h], maxima[c][h]);
      }
    }
    return keyMax;
  }

  /**
   * Fills the pass's packed node table on {@code useThreads} threads, in equal ranges of nodes.
   *
   * @return true if every key and value float is finite
   */
  private static boolean pack(AllHeadsPass pass, int n, int useThreads) {
    AtomicBoolean finite = new AtomicBoolean(true);
    forEachNodeRange(
        n,
        useThreads,
        (chunk, from, to) -> {
          if (!pass.fill(from, to)) {
            finite.set(false);
          }
        });
    return finite.get();
  }

  /** One range of a phase over nodes: chunk {@code chunk}, nodes {@code from..to-1}. */
  @FunctionalInterface
  private interface NodeRange {
    void run(int chunk, int from, int to);
  }

  /** The ranges {@link #forEachNodeRange} splits n nodes into: one on one thread. */
  private static int nodeChunks(int n, int useThreads) {
    return useThreads == 1 ? 1 : Math.min(n, useThreads * CHUNKS_PER_THREAD);
  }

  /**
   * Runs {@code body} over {@link #nodeChunks} equal ranges of nodes {@code 0..n-1}, which the
   * calling thread and {@code useThreads - 1} helpers claim until none are left.
   */
  private static void forEachNodeRange(int n, int useThreads, NodeRange body) {
    if (useThreads == 1) {
      body.run(0, 0, n);
      return;
    }
    int chunks = nodeChunks(n, useThreads);
    AtomicInteger next = new AtomicInteger();
    KernelWorkers.runShared(
        useThreads - 1,
        () -> {
          for (int c = next.getAndIncrement(); c < chunks; c = next.getAndIncrement()) {
            body.run(c, (int) ((long) n * c / chunks), (int) ((long) n * (c + 1) / chunks));
          }
        });
  }

  /** Runs every row of the pass on {@code useThreads} threads. */
  private static void run(CsrPass pass, AttentionPattern pattern, int useThreads) {
    int n = pattern.nodeCount();
    if (useThreads == 1) {
      pass.run(0, n, pass.newScratch());
      return;
    }
    int[] bounds = partitionRows(pattern, Math.min(n, useThreads * CHUNKS_PER_THREAD));
    int chunks = bounds.length - 1;
    AtomicInteger next = new AtomicInteger();
    KernelWorkers.runShared(
        useThreads - 1,
        () -> {
          CsrPass.Scratch scratch = null;
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
