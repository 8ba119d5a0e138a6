package dev.heed.attention.dense;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.CostRegime;
import dev.heed.attention.internal.DenseStartUp;
import dev.heed.attention.internal.KernelWorkers;
import dev.heed.attention.internal.RowSoftmax;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CsrGraph;
import java.nio.FloatBuffer;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.concurrent.atomic.AtomicInteger;
import org.nd4j.linalg.api.buffer.DataType;
import org.nd4j.linalg.api.memory.MemoryWorkspace;
import org.nd4j.linalg.api.ndarray.INDArray;
import org.nd4j.linalg.api.ops.impl.scalar.LeakyReLU;
import org.nd4j.linalg.api.ops.impl.transforms.custom.SoftMax;
import org.nd4j.linalg.api.ops.impl.transforms.strict.Exp;
import org.nd4j.linalg.factory.Nd4j;
import org.nd4j.linalg.indexing.NDArrayIndex;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The dense kernel: for each block of target rows and each head, forms the block's scores against
 * all n sources, masks them, applies softmax across each row and multiplies by the values.
 *
 * <ul>
 *   <li>Scaled dot-product (Vaswani et al. 2017, eq. 1): {@code S = (1/√d)·Q_blk·K_hᵀ}, one BLAS
 *       gemm with the scale as its alpha.
 *   <li>Additive (GAT, Veličković et al. 2018, eq. 1 split into per-target and per-source terms):
 *       {@code S_ij = LeakyReLU(q_i + k_j)}. Where the JVM reads the Vector API, formed row by row
 *       inside the softmax pass below, so the scores never take a pass of their own over the block;
 *       otherwise by broadcasting the row {@code k} and the column {@code q_blk} over the block
 *       (ND4J broadcast adds; measured about twice as fast as a rank-2 gemm of {@code [q, 1]} by
 *       {@code [1, k]}ᵀ), then LeakyReLU in place. No n×n×d work.
 *   <li>GATv2 (Brody et al. 2022): {@code S_ij = aᵀ LeakyReLU(q_i + k_j)} is inherently n×n×d and
 *       has no matrix-product form, so it is computed in Java loops (on up to {@code
 *       options.threads()} threads), one score row at a time: over the complete pattern along
 *       contiguous rows of the keys transposed per head, over a CSR mask only for allowed pairs.
 *       Cost O(n²·H·keyDim) (complete) or O(E·H·keyDim) (mask) in Java, plus the ND4J steps.
 *   <li>A CSR pattern is a 0/1 mask: a bias block holding 0 for allowed and -∞ for other pairs is
 *       added after the score (and after LeakyReLU, so a slope of 0 never meets -∞), and softmax
 *       gives those pairs exactly 0. Rows with no allowed source get a zero output row. On the
 *       Vector API route the mask is a bit per pair, one block of rows at a time, applied inside
 *       the softmax pass (no ND4J add per head, and a block's bits stay in cache where a float per
 *       pair did not), so a masked call costs little more than a complete-pattern call.
 *   <li>Softmax, where the JVM reads the Vector API ({@link RowSoftmaxes}): each score row of the
 *       block is copied to the heap, replaced by {@code exp(s - rowMax)} (common practice: the row
 *       maximum keeps every term in [0, 1]) and summed in Java, on up to {@code options.threads()}
 *       threads, and copied back; then {@code out_blk = P·V_h}, one gemm into a preallocated array,
 *       and the rows are divided by their sums while being copied out. Measured several times
 *       faster than ND4J's element-wise {@code Exp}.
 *   <li>Without the Vector API, one ND4J call over the whole block: when a bound from the input
 *       norms shows that no score of the head exceeds {@link #UNSHIFTED_EXP_LIMIT} in magnitude,
 *       just {@code exp} (no row maximum, no normalising pass); otherwise ND4J's native softmax.
 *       Then {@code [out_blk, rowSum] = P·[V_h, 1]} yields the row sums too.
 *   <li>A row whose float32 scores, sum or output overflow (inputs of huge magnitude) is recomputed
 *       in float64 as {@link AttentionKernel} states: scores clamped to the float32 range, softmax
 *       and weighted sum in float64, so the output stays a finite convex combination of value rows.
 * </ul>
 *
 * <p>Memory: see {@link DenseBlockPlan}. All ND4J arrays are allocated outside any workspace the
 * caller may have open and closed before the call returns, so repeated calls do not accumulate
 * off-heap memory.
 *
 * <p>Threads. A small call ({@link CostRegime#isSmallDenseCall}) runs on the calling thread alone,
 * with one BLAS thread. A large call on the Vector API route with dot-product or additive scores is
 * split: its blocks are taken in turn by as many threads of its own as the process gives BLAS (the
 * calling thread and helpers from {@link KernelWorkers}), and each thread runs all of a block's
 * work itself (both products on one BLAS thread, the softmax, the copy out), so the call hands work
 * between threads once instead of at every step of every block and head. Measured on 2 cores (n =
 * 4096, 8 heads × 64 dims): the kernel's time against its two matrix products alone went from 1.7×
 * to about 1.3× (benchmarks/RESULTS.md, "Dense path"). Every other large call runs its products on
 * BLAS's threads and its Java work (GATv2 scores, softmax) on {@code options.threads()} threads, in
 * fixed row ranges. Either way a block covers the same rows and runs the same steps whichever
 * thread takes it, so results do not depend on {@code options.threads()}.
 *
 * <p>Thread safety: immutable; every call uses only its own scratch. Results are deterministic for
 * a fixed ND4J/OpenBLAS thread configuration (the order of each reduction does not depend on
 * timing). The BLAS thread count is switched for small and split calls ({@link BlasThreadMode}); a
 * large call that overlaps another call on another thread may run its products on a different count
 * than it would alone, which changes their speed and, should the BLAS library split a product's
 * sums differently (it does for products only a few columns wide), the last bits of its results.
 */
final class DenseAttentionKernel implements AttentionKernel {

  private static final Logger LOG = LoggerFactory.getLogger(DenseAttentionKernel.class);

  /**
   * When no score of a head can exceed this magnitude, softmax skips the row maximum: {@code
   * exp(e)} is taken directly (ND4J's Exp over the whole block) and normalised afterwards by the
   * row sum that the second product yields. Softmax is shift-invariant (common practice), and with
   * |e| ≤ 60 every exp is a normal float32 between e⁻⁶⁰ ≈ 8.8e-27 and e⁶⁰ ≈ 1.1e26, so a row of up
   * to 2³¹ terms sums without overflow and its largest term never underflows. The limit is lowered
   * further for values of very large or very small magnitude (see {@code safeUnshiftedLimit}).
   * Otherwise the kernel uses ND4J's native softmax, which subtracts the row maximum.
   */
  static final double UNSHIFTED_EXP_LIMIT = 60.0;

  /**
   * Below this many terms per block (rows·n·keyDim for GATv2 scores, rows·n for the softmax), Java
   * work stays on the calling thread.
   */
  private static final long PARALLEL_MIN_WORK = 1L << 18;

  /**
   * Least n² of a call that splits its blocks over its own threads (n of 2,897 and more): smaller
   * calls, of some tens of milliseconds at 4 heads × 16, ran in phases about 1.6–1.8× slower with
   * their two threads (as short two-thread sparse calls do on the reference machine, where the OS
   * can place both on one core), which split calls at n = 4096 did not show.
   */
  static final long SPLIT_MIN_PAIRS = CostRegime.DENSE_SPLIT_MIN_PAIRS;

  private final KernelOptions options;
  private final long targetBlockFloats;
  private final long splitTargetBlockFloats;
  private final long splitMinPairs;
  private final long minTargetRows;
  private final double unshiftedExpLimit;
  private final RowSoftmax rowSoftmax;

  /**
   * Creates the kernel.
   *
   * @param options threads and budget
   * @param targetBlockFloats upper bound on one score block (rows · n)
   * @param minTargetRows least block height the target allows (the budget may still force less)
   * @param unshiftedExpLimit score bound up to which exp is taken without the row maximum ({@link
   *     #UNSHIFTED_EXP_LIMIT}; tests pass a negative value to force the shifted softmax); used only
   *     on the ND4J route
   * @param rowSoftmax the Java softmax of score rows ({@link RowSoftmaxes#preferred()}), or null to
   *     take the exponentials with ND4J's ops
   */
  DenseAttentionKernel(
      KernelOptions options,
      long targetBlockFloats,
      long minTargetRows,
      double unshiftedExpLimit,
      RowSoftmax rowSoftmax) {
    this(
        options,
        targetBlockFloats,
        targetBlockFloats,
        SPLIT_MIN_PAIRS,
        minTargetRows,
        unshiftedExpLimit,
        rowSoftmax);
  }

  /**
   * Creates the kernel with its own block target and least size for split calls.
   *
   * @param options threads and budget
   * @param targetBlockFloats upper bound on one score block (rows · n)
   * @param splitTargetBlockFloats upper bound on each thread's score block when a call splits its
   *     blocks over its threads ({@link DenseBlockPlan#SPLIT_TARGET_BLOCK_FLOATS})
   * @param splitMinPairs least n² of a call that splits ({@link #SPLIT_MIN_PAIRS}; tests pass 0)
   * @param minTargetRows least block height the target allows (the budget may still force less)
   * @param unshiftedExpLimit score bound up to which exp is taken without the row maximum
   * @param rowSoftmax the Java softmax of score rows, or null to take the exponentials with ND4J's
   *     ops
   */
  DenseAttentionKernel(
      KernelOptions options,
      long targetBlockFloats,
      long splitTargetBlockFloats,
      long splitMinPairs,
      long minTargetRows,
      double unshiftedExpLimit,
      RowSoftmax rowSoftmax) {
    this.splitMinPairs = splitMinPairs;
    this.options = options;
    this.targetBlockFloats = targetBlockFloats;
    this.splitTargetBlockFloats = splitTargetBlockFloats;
    this.minTargetRows = minTargetRows;
    this.unshiftedExpLimit = unshiftedExpLimit;
    this.rowSoftmax = rowSoftmax;
  }

  @Override
  public ComputePath path() {
    return ComputePath.DENSE;
  }

  @Override
  public String describe() {
    return "dense-nd4j(row blocks, BLAS gemm, "
        + (rowSoftmax == null
            ? "ND4J exp or softmax"
            : "Java " + rowSoftmax.describe() + " softmax")
        + "), budget "
        + options.denseMemoryBudgetBytes()
        + " bytes, Java threads (GATv2 scores, softmax) "
        + options.threads()
        + ", BLAS threads process-wide (one for calls of n < 725; calls with dot-product or"
        + " additive scores split their blocks over that many threads, one BLAS thread each)";
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
    AttentionKernels.checkCall(pattern, score, shape, query, key, value, out, weights);
    int n = pattern.nodeCount();
    if (n == 0) {
      return;
    }
    DenseStartUp.markStarted(); // before ND4J's first use: AUTO no longer charges its start-up
    boolean gatv2 = score instanceof ScoreFunction.Gatv2;
    // A small call (n below 725, not GATv2) runs on the calling thread with one BLAS thread.
    // Measured on 2 cores, 4 heads × 16 dims, additive and dot-product scores, all on one thread
    // against two Java and two BLAS threads: 1.2–1.4× faster at n = 384 to 640, a tie at n = 768,
    // 1.2–1.3× slower at n = 1024. GATv2 keeps its threads: it forms every score in Java (n²·dk
    // terms), the part that two threads speed up. The path cost model prices calls by this rule.
    boolean small = CostRegime.isSmallDenseCall(n, score);
    // Java threads: GATv2 scores, and the Vector API softmax (when the route is taken)
    int javaThreads = !small && (gatv2 || rowSoftmax != null) ? options.threads() : 1;
    boolean parallel =
        javaThreads > 1 && (long) n * n * (gatv2 ? shape.keyDim() : 1) >= PARALLEL_MIN_WORK;
    BlasThreadMode blasThreads = BlasThreadMode.process();
    boolean masked = pattern instanceof CsrGraph;
    long budget = options.denseMemoryBudgetBytes();
    // A large call on the Java route (not GATv2) splits its blocks over as many threads of its
    // own as BLAS has, each block's products on one BLAS thread (see the class comment), when
    // the budget holds a block per thread.
    int splitThreads =
        !small && !gatv2 && rowSoftmax != null && (long) n * n >= splitMinPairs
            ? blasThreads.splitThreads()
            : 1;
    boolean split =
        splitThreads > 1
            && DenseBlockPlan.fits(n, score, shape, masked, splitThreads, budget, splitThreads);
    DenseBlockPlan plan =
        split
            ? DenseBlockPlan.of(
                n,
                score,
                shape,
                masked,
                splitThreads,
                budget,
                splitTargetBlockFloats,
                minTargetRows,
                splitThreads)
            : DenseBlockPlan.of(
                n, score, shape, masked, javaThreads, budget, targetBlockFloats, minTargetRows);
    if (LOG.isTraceEnabled()) {
      LOG.trace(
          "dense call n={} {} {}: block rows {}{}, scratch {} bytes",
          n,
          shape,
          score,
          plan.blockRows(),
          split ? ", blocks split over " + splitThreads + " threads" : "",
          plan.bytesUsed());
    }
    // Allocate outside any workspace the caller has open, so close() below really frees.
    MemoryWorkspace outside = Nd4j.getWorkspaceManager().scopeOutOfWorkspaces();
    if (small) {
      blasThreads.enterSmall();
    } else if (split) {
      blasThreads.enterSplit();
    } else {
      blasThreads.enterLarge();
    }
    try {
      new Call(
              pattern,
              score,
              shape,
              query,
              key,
              value,
              out,
              weights,
              plan,
              parallel,
              split,
              split ? splitThreads : javaThreads,
              unshiftedExpLimit,
              rowSoftmax)
          .run();
    } finally {
      if (small) {
        blasThreads.exitSmall();
      } else if (split) {
        blasThreads.exitSplit();
      } else {
        blasThreads.exitLarge();
      }
      outside.close();
    }
  }

  /**
   * The state of one call: its arguments and its own scratch. Used once; prepared and closed on the
   * calling thread, its blocks run on the call's threads.
   */
  private static final class Call {
    private final CsrGraph graph;
    private final ScoreFunction score;
    private final int n;
    private final int heads;
    private final int keyDim;
    private final int valueDim;
    private final float[] query;
    private final float[] key;
    private final float[] value;
    private final float[] out;
    private final float[] weights;
    private final DenseBlockPlan plan;
    private final HeadShape shape;
    private final boolean parallel;
    private final boolean split;
    private final int workers;
    private final double unshiftedExpLimit;
    private final RowSoftmax rowSoftmax;
    private final int valueWidth;
    private final List<INDArray> owned = new ArrayList<>();
    private float[] keyByHead;

    Call(
        AttentionPattern pattern,
        ScoreFunction score,
        HeadShape shape,
        float[] query,
        float[] key,
        float[] value,
        float[] out,
        float[] weights,
        DenseBlockPlan plan,
        boolean parallel,
        boolean split,
        int workers,
        double unshiftedExpLimit,
        RowSoftmax rowSoftmax) {
      this.graph = pattern instanceof CsrGraph g ? g : null;
      this.score = score;
      this.n = pattern.nodeCount();
      this.heads = shape.heads();
      this.keyDim = shape.keyDim();
      this.valueDim = shape.valueDim();
      this.query = query;
      this.key = key;
      this.value = value;
      this.out = out;
      this.weights = weights;
      this.plan = plan;
      this.shape = shape;
      this.parallel = parallel;
      this.split = split;
      this.workers = workers;
      this.unshiftedExpLimit = unshiftedExpLimit;
      this.rowSoftmax = rowSoftmax;
      // the ND4J route gets each row's sum of weights from a column of ones appended to V
      this.valueWidth = rowSoftmax == null ? valueDim + 1 : valueDim;
    }

    void run() {
      try {
        compute();
      } finally {
        for (INDArray a : owned) {
          a.close();
        }
        owned.clear();
      }
    }

    private INDArray allocate(long rows, long cols) {
      INDArray a = Nd4j.create(DataType.FLOAT, new long[] {rows, cols}, 'c');
      owned.add(a);
      return a;
    }

    // What compute() prepares once and every block then reads (on any of the call's threads).
    private boolean additive;
    private boolean gatv2;
    private boolean javaRoute;
    private boolean additiveInRows;
    private float[][] keyRows;
    private INDArray[] packedQuery;
    private INDArray[] packedKey;
    private INDArray[] packedValue;
    private boolean[] unshifted;
    private float scale;

    private void compute() {
      additive = score instanceof ScoreFunction.Additive;
      gatv2 = score instanceof ScoreFunction.Gatv2;
      // The Java route forms additive scores and adds the mask inside its softmax pass over each
      // row (RowSoftmax), so neither costs a pass of its own over the score block.
      javaRoute = rowSoftmax != null;
      additiveInRows = additive && javaRoute;
      keyRows = additiveInRows ? additiveKeyRows() : null;
      if (!gatv2 && !additiveInRows) {
        packedQuery = new INDArray[heads];
        packedKey = new INDArray[heads];
        for (int h = 0; h < heads; h++) {
          packedQuery[h] = allocate(n, keyDim);
          packedKey[h] = additive ? allocate(1, n) : allocate(n, keyDim);
          if (additive) {
            pack(query, 1, h, packedQuery[h]); // a column [n, 1]
            pack(key, 1, h, packedKey[h]); // a row [1, n], the same floats
          } else {
            pack(query, keyDim, h, packedQuery[h]);
            pack(key, keyDim, h, packedKey[h]);
          }
        }
      }
      // On the ND4J route values are packed as [v_j, 1]: the product P·[V, 1] also yields each
      // row's sum of P. The Java route sums each row while exponentiating it.
      packedValue = new INDArray[heads];
      unshifted = new boolean[heads];
      for (int h = 0; h < heads; h++) {
        packedValue[h] = allocate(n, valueWidth);
        packValues(h, packedValue[h]);
        unshifted[h] =
            rowSoftmax == null
                && scoreBound(h) <= Math.min(unshiftedExpLimit, safeUnshiftedLimit(h));
      }
      keyByHead = gatv2 && graph == null ? transposeKeys() : null;
      scale = score instanceof ScoreFunction.ScaledDotProduct s ? s.scale(keyDim) : 1f;
      int blockRows = plan.blockRows();
      if (!split) {
        BlockScratch scratch = new BlockScratch(blockRows, workers);
        for (int first = 0; first < n; first += blockRows) {
          block(first, Math.min(blockRows, n - first), scratch, parallel);
        }
        return;
      }
      // Each thread takes whole blocks, in turn, and runs all of a block's work itself: its
      // products on one BLAS thread, then its softmax. One hand-off per call instead of one per
      // block, head and step, and a block's scores stay in its thread's caches. Every block
      // covers the same rows and runs the same steps whichever thread takes it.
      BlockScratch[] scratch = new BlockScratch[workers];
      for (int w = 0; w < workers; w++) {
        scratch[w] = new BlockScratch(blockRows, 1);
      }
      int blocks = (n + blockRows - 1) / blockRows;
      AtomicInteger nextScratch = new AtomicInteger();
      AtomicInteger nextBlock = new AtomicInteger();
      KernelWorkers.runShared(
          workers - 1,
          () -> {
            BlockScratch own = scratch[nextScratch.getAndIncrement()];
            for (int b = nextBlock.getAndIncrement(); b < blocks; b = nextBlock.getAndIncrement()) {
              int first = b * blockRows;
              block(first, Math.min(blockRows, n - first), own, false);
            }
          });
    }

    /**
     * One thread's scratch for a block of target rows: the ND4J blocks of the two products and the
     * Java buffers around them, all allocated on the calling thread (so {@link #owned} is only ever
     * touched there).
     */
    private final class BlockScratch {
      final int blockRows;
      final INDArray scores;
      final FloatBuffer scoreBuffer;
      final INDArray bias;
      final FloatBuffer biasBuffer;
      final INDArray outBlock;
      final FloatBuffer outBuffer;
      final byte[] allowed;
      final float[][] rows;
      final float[] sums;
      final boolean[] recomputed;

      BlockScratch(int blockRows, int rowThreads) {
        this.blockRows = blockRows;
        scores = allocate(blockRows, n);
        scoreBuffer = scores.data().asNioFloat();
        bias = graph != null && !gatv2 && !javaRoute ? allocate(blockRows, n) : null;
        biasBuffer = bias == null ? null : bias.data().asNioFloat();
        int rowBytes = (n + 7) >>> 3;
        allowed = graph != null && !gatv2 && javaRoute ? new byte[blockRows * rowBytes] : null;
        outBlock = allocate(blockRows, valueWidth);
        outBuffer = outBlock.data().asNioFloat();
        rows = new float[rowThreads][n];
        sums = new float[blockRows];
        recomputed = new boolean[blockRows];
      }
    }

    /**
     * Every head of target rows {@code first..first+rows-1}: scores, softmax, the second product
     * and the copy out. With {@code shareRows} the Java work on the block's rows is shared out
     * among the call's threads ({@link #forRowRanges}); otherwise it all runs on this thread.
     */
    private void block(int first, int rows, BlockScratch scratch, boolean shareRows) {
      boolean whole = rows == scratch.blockRows;
      INDArray s = whole ? scratch.scores : leadingRows(scratch.scores, rows);
      INDArray o = whole ? scratch.outBlock : leadingRows(scratch.outBlock, rows);
      FloatBuffer scoreBuffer = scratch.scoreBuffer;
      float[] row = scratch.rows[0];
      INDArray bias = null;
      if (scratch.bias != null) {
        bias = whole ? scratch.bias : leadingRows(scratch.bias, rows);
        fillBias(first, rows, scratch.biasBuffer, row);
      }
      for (int h = 0; h < heads; h++) {
        if (gatv2) {
          gatv2Scores(
              (ScoreFunction.Gatv2) score, first, rows, h, scoreBuffer, scratch.rows, shareRows);
        } else if (!additiveInRows) {
          INDArray q =
              packedQuery[h].get(NDArrayIndex.interval(first, first + rows), NDArrayIndex.all());
          if (additive) {
            // q_i + k_j: 0 + k_j is exact, so one rounding, as in the float64 equation.
            s.assign(0f).addiRowVector(packedKey[h]).addiColumnVector(q);
            Nd4j.exec(new LeakyReLU(s, s, ((ScoreFunction.Additive) score).negativeSlope()));
          } else {
            Nd4j.gemm(q, packedKey[h], s, false, true, scale, 0.0);
          }
          if (bias != null) {
            s.addi(bias);
          }
        }
        if (javaRoute) {
          int head = h;
          float[] headKeys = additiveInRows ? keyRows[h] : null;
          float[] sums = scratch.sums;
          byte[] allowed = scratch.allowed;
          forRowRanges(
              rows,
              (long) rows * n,
              scoreBuffer,
              scratch.rows,
              shareRows,
              (from, to, buffer, rowBuffer) ->
                  softmaxRows(from, to, buffer, rowBuffer, sums, first, head, headKeys, allowed));
        } else if (unshifted[h]) {
          Nd4j.exec(new Exp(s, s)); // unnormalised; see UNSHIFTED_EXP_LIMIT
        } else {
          Nd4j.exec(new SoftMax(s, s, 1));
        }
        Nd4j.gemm(s, packedValue[h], o, false, false, 1.0, 0.0);
        Arrays.fill(scratch.recomputed, false);
        copyOut(first, rows, h, scratch.outBuffer, scratch.sums, scratch.recomputed);
        if (weights != null) {
          copyWeights(first, rows, h, scoreBuffer, row, scratch.sums, scratch.recomputed);
        }
      }
    }

    private static INDArray leadingRows(INDArray block, int rows) {
      return block.get(NDArrayIndex.interval(0, rows), NDArrayIndex.all());
    }

    /** Copies head {@code h} of a node-major, head-contiguous array into {@code [n, width]}. */
    private void pack(float[] source, int width, int h, INDArray target) {
      FloatBuffer buffer = target.data().asNioFloat();
      for (int j = 0; j < n; j++) {
        buffer.put(j * width, source, (j * heads + h) * width, width);
      }
    }

    /**
     * Copies head {@code h} of the values into {@code [n, valueWidth]}; on the ND4J route the last
     * column is 1.
     */
    private void packValues(int h, INDArray target) {
      FloatBuffer buffer = target.data().asNioFloat();
      int width = valueWidth;
      for (int j = 0; j < n; j++) {
        buffer.put(j * width, value, (j * heads + h) * valueDim, valueDim);
        if (width > valueDim) {
          buffer.put(j * width + valueDim, 1f);
        }
      }
    }

    /**
     * The Java route for rows {@code from..to-1} of the block ({@code first} is the block's first
     * target), head {@code h}: each row's scores (formed here from {@code headKeys} for additive
     * scores, else copied from the block to the heap), plus the mask when there is one, are
     * replaced by {@code exp(s - rowMax)} and written to the block; the sum goes to {@code sums}.
     * For head 0 the rows' mask bits are written first ({@link #fillAllowed}), so that this work is
     * shared out among the threads too.
     */
    private void softmaxRows(
        int from,
        int to,
        FloatBuffer scoreBuffer,
        float[] row,
        float[] sums,
        int first,
        int h,
        float[] headKeys,
        byte[] allowed) {
      int rowBytes = (n + 7) >>> 3;
      if (allowed != null && h == 0) {
        // each worker writes its own rows' bits, which every head of the block then reads
        fillAllowed(first, from, to, allowed, rowBytes);
      }
      for (int r = from; r < to; r++) {
        if (headKeys != null) {
          float slope = ((ScoreFunction.Additive) score).negativeSlope();
          float q = query[(first + r) * heads + h];
          sums[r] =
              rowSoftmax.exponentiateAdditive(q, headKeys, slope, allowed, r * rowBytes, row, n);
        } else {
          scoreBuffer.get(r * n, row, 0, n);
          sums[r] =
              allowed != null
                  ? rowSoftmax.exponentiateShifted(row, allowed, r * rowBytes, n)
                  : rowSoftmax.exponentiateShifted(row, n);
        }
        scoreBuffer.put(r * n, row, 0, n);
      }
    }

    /** The additive scores' source terms per head: {@code [H][n]}, source j at index j. */
    private float[][] additiveKeyRows() {
      float[][] rows = new float[heads][n];
      for (int j = 0; j < n; j++) {
        for (int h = 0; h < heads; h++) {
          rows[h][j] = key[j * heads + h];
        }
      }
      return rows;
    }

    /**
     * Returns an upper bound on |e_ij| over all pairs for head {@code h}, from per-node norms in
     * O(n·keyDim): Cauchy–Schwarz for dot products, the triangle inequality otherwise (LeakyReLU
     * with slope in [0, 1) never increases a magnitude).
     */
    private double scoreBound(int h) {
      if (score instanceof ScoreFunction.ScaledDotProduct dot) {
        return dot.scale(keyDim) * maxNorm(query, h) * maxNorm(key, h);
      }
      if (score instanceof ScoreFunction.Gatv2 g) {
        double bound = 0;
        for (int k = 0; k < keyDim; k++) {
          bound +=
              Math.abs((double) g.attention(h * keyDim + k))
                  * (maxAbs(query, h, k) + maxAbs(key, h, k));
        }
        return bound;
      }
      return maxAbs(query, h, 0) + maxAbs(key, h, 0);
    }

    /**
     * Returns the largest score bound for which exp without the row maximum is safe for head {@code
     * h}, given its values. With scores in [-B, B] each weight lies in [e^-B, e^B]: the row sums
     * (up to n·e^B) and weighted value sums (up to n·e^B·max|v|) must stay well below the float32
     * maximum (e^88.7), and the products of e^-B with the largest values must stay a factor 2^24
     * (e^16.6) above the smallest normal float (e^-87.3), so nothing underflows.
     */
    private double safeUnshiftedLimit(int h) {
      double maxValue = 0;
      for (int j = 0; j < n; j++) {
        int at = (j * heads + h) * valueDim;
        for (int c = 0; c < valueDim; c++) {
          maxValue = Math.max(maxValue, Math.abs(value[at + c]));
        }
      }
      if (maxValue == 0) {
        return Double.NEGATIVE_INFINITY; // all-zero values: take the shifted route, output 0
      }
      double logValue = Math.log(maxValue);
      double overflow = 84.0 - Math.log(n) - Math.max(0, logValue);
      double underflow = 70.0 + Math.min(0, logValue);
      return Math.min(overflow, underflow);
    }

    private double maxNorm(float[] terms, int h) {
      double max = 0;
      for (int j = 0; j < n; j++) {
        int at = (j * heads + h) * keyDim;
        double sq = 0;
        for (int k = 0; k < keyDim; k++) {
          sq += (double) terms[at + k] * terms[at + k];
        }
        max = Math.max(max, sq);
      }
      return Math.sqrt(max);
    }

    private double maxAbs(float[] terms, int h, int k) {
      double max = 0;
      for (int j = 0; j < n; j++) {
        max = Math.max(max, Math.abs(terms[(j * heads + h) * keyDim + k]));
      }
      return max;
    }

    /** Mask bias for rows first..first+rows-1 into the ND4J block, through {@link #maskRow}. */
    private void fillBias(int first, int rows, FloatBuffer biasBuffer, float[] row) {
      for (int r = 0; r < rows; r++) {
        maskRow(first + r, row, 0);
        biasBuffer.put(r * n, row, 0, n);
      }
    }

    /**
     * The Java route's mask for block rows from..to-1 (targets first+from..first+to-1), a bit per
     * pair: row r from {@code allowed[r·rowBytes]} (layout of {@link RowSoftmax#isAllowed}); every
     * pair of an empty row is allowed, as in {@link #maskRow} (its output is zero anyway).
     */
    private void fillAllowed(int first, int from, int to, byte[] allowed, int rowBytes) {
      for (int r = from; r < to; r++) {
        int i = first + r;
        int at = r * rowBytes;
        int start = graph.rowStart(i);
        int end = graph.rowEnd(i);
        Arrays.fill(allowed, at, at + rowBytes, start == end ? (byte) -1 : 0);
        for (int e = start; e < end; e++) {
          int j = graph.column(e);
          allowed[at + (j >>> 3)] |= (byte) (1 << (j & 7));
        }
      }
    }

    /**
     * Target i's mask into {@code to[at..at+n-1]}: 0 where allowed, -∞ elsewhere; 0 for an empty
     * row (its output is zero anyway).
     */
    private void maskRow(int i, float[] to, int at) {
      int start = graph.rowStart(i);
      int end = graph.rowEnd(i);
      Arrays.fill(to, at, at + n, start == end ? 0f : Float.NEGATIVE_INFINITY);
      for (int e = start; e < end; e++) {
        to[at + graph.column(e)] = 0f;
      }
    }

    private boolean isolated(int i) {
      return graph != null && graph.rowStart(i) == graph.rowEnd(i);
    }

    /**
     * Writes {@code o[r, 0..dv-1] / o[r, dv]} (the weighted sum over the row's sum of weights) to
     * the caller's output, and keeps each row's sum for the weights. A row whose sum or output is
     * not finite is recomputed in float64 ({@link #exactRow}) and marked in {@code recomputed}.
     */
    private void copyOut(
        int first, int rows, int h, FloatBuffer outBuffer, float[] sums, boolean[] recomputed) {
      int width = valueWidth;
      for (int r = 0; r < rows; r++) {
        int i = first + r;
        int at = (i * heads + h) * valueDim;
        if (isolated(i)) {
          Arrays.fill(out, at, at + valueDim, 0f);
          continue;
        }
        float sum = rowSoftmax != null ? sums[r] : outBuffer.get(r * width + valueDim);
        sums[r] = sum;
        boolean finite = sum > 0f && sum < Float.POSITIVE_INFINITY;
        if (finite) {
          outBuffer.get(r * width, out, at, valueDim);
          for (int c = at; c < at + valueDim && finite; c++) {
            float v = out[c] / sum;
            finite = Float.isFinite(v);
            out[c] = v;
          }
        }
        if (!finite) {
          exactRow(i, h);
          recomputed[r] = true;
        }
      }
    }

    /**
     * The rare path after a float32 overflow in row {@code i}, head {@code h}: scores in float64
     * clamped to the float32 range, then softmax (row maximum subtracted) and the weighted sum in
     * float64, written to the output and, if asked for, the weights.
     */
    private void exactRow(int i, int h) {
      int count = graph == null ? n : graph.rowEnd(i) - graph.rowStart(i);
      double[] e = new double[count];
      double max = Double.NEGATIVE_INFINITY;
      for (int t = 0; t < count; t++) {
        int j = graph == null ? t : graph.column(graph.rowStart(i) + t);
        double raw = ReferenceAttention.score(score, shape, query, key, i, j, h);
        e[t] = Math.max(-Float.MAX_VALUE, Math.min(Float.MAX_VALUE, raw));
        max = Math.max(max, e[t]);
      }
      double sum = 0;
      for (int t = 0; t < count; t++) {
        e[t] = Math.exp(e[t] - max);
        sum += e[t];
      }
      double[] acc = new double[valueDim];
      for (int t = 0; t < count; t++) {
        int j = graph == null ? t : graph.column(graph.rowStart(i) + t);
        double w = e[t] / sum;
        int from = (j * heads + h) * valueDim;
        for (int c = 0; c < valueDim; c++) {
          acc[c] += w * value[from + c];
        }
        if (weights != null) {
          int entry = graph == null ? i * n + j : graph.rowStart(i) + t;
          weights[entry * heads + h] = (float) w;
        }
      }
      int at = (i * heads + h) * valueDim;
      for (int c = 0; c < valueDim; c++) {
        out[at + c] = (float) acc[c];
      }
    }

    private void copyWeights(
        int first,
        int rows,
        int h,
        FloatBuffer scoreBuffer,
        float[] row,
        float[] sums,
        boolean[] recomputed) {
      for (int r = 0; r < rows; r++) {
        int i = first + r;
        if (isolated(i) || recomputed[r]) {
          continue;
        }
        scoreBuffer.get(r * n, row, 0, n);
        float sum = sums[r];
        if (graph == null) {
          int base = i * n;
          for (int j = 0; j < n; j++) {
            weights[(base + j) * heads + h] = row[j] / sum;
          }
        } else {
          for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
            weights[e * heads + h] = row[graph.column(e)] / sum;
          }
        }
      }
    }

    /** GATv2 scores of one block and head, written into the score block (rows × n). */
    private void gatv2Scores(
        ScoreFunction.Gatv2 gatv2,
        int first,
        int rows,
        int h,
        FloatBuffer scoreBuffer,
        float[][] workerRows,
        boolean shareRows) {
      // a·LeakyReLU(x) = c·x + c'·|x| with c = a(1 + slope)/2, c' = a(1 - slope)/2: branch-free,
      // which the JIT vectorises (measured here about 1.6x faster than a·max(x, slope·x)).
      float slope = gatv2.negativeSlope();
      float[] linear = new float[keyDim];
      float[] absolute = new float[keyDim];
      for (int k = 0; k < keyDim; k++) {
        float a = gatv2.attention(h * keyDim + k);
        linear[k] = a * 0.5f * (1f + slope);
        absolute[k] = a * 0.5f * (1f - slope);
      }
      forRowRanges(
          rows,
          (long) rows * n * keyDim,
          scoreBuffer,
          workerRows,
          shareRows,
          (from, to, buffer, row) -> gatv2Rows(first, from, to, h, linear, absolute, buffer, row));
    }

    /**
     * Work on rows {@code from..to-1} of a block, with its own view of the block and row buffer.
     */
    private interface RowRangeTask {
      void run(int from, int to, FloatBuffer block, float[] row);
    }

    /**
     * Runs {@code task} over rows {@code 0..rows-1} of the block, split in {@code workers} equal
     * ranges over the calling thread and {@link KernelWorkers} helpers when {@code shareRows} is
     * set, the call is parallel and the work is at least {@link #PARALLEL_MIN_WORK}; range p always
     * gets view p of the block and row buffer p, whichever thread runs it.
     */
    private void forRowRanges(
        int rows,
        long work,
        FloatBuffer block,
        float[][] workerRows,
        boolean shareRows,
        RowRangeTask task) {
      if (!shareRows || !parallel || work < PARALLEL_MIN_WORK) {
        task.run(0, rows, block, workerRows[0]);
        return;
      }
      int parts = workers;
      int chunk = (rows + parts - 1) / parts;
      FloatBuffer[] views = new FloatBuffer[parts];
      for (int p = 0; p < parts; p++) {
        views[p] = block.duplicate();
      }
      AtomicInteger next = new AtomicInteger();
      KernelWorkers.runShared(
          parts - 1,
          () -> {
            for (int p = next.getAndIncrement(); p < parts; p = next.getAndIncrement()) {
              int from = p * chunk;
              int to = Math.min(rows, from + chunk);
              if (from < to) {
                task.run(from, to, views[p], workerRows[p]);
              }
            }
          });
    }

    /** Keys as {@code [H][keyDim][n]}: element (h, k, j) at {@code (h·keyDim + k)·n + j}. */
    private float[] transposeKeys() {
      float[] t = new float[n * heads * keyDim];
      for (int j = 0; j < n; j++) {
        for (int h = 0; h < heads; h++) {
          int from = (j * heads + h) * keyDim;
          for (int k = 0; k < keyDim; k++) {
            t[(h * keyDim + k) * n + j] = key[from + k];
          }
        }
      }
      return t;
    }

    /** Scores rows {@code from..to-1} of the block; disallowed pairs get -∞, empty rows 0. */
    private void gatv2Rows(
        int first,
        int from,
        int to,
        int h,
        float[] linear,
        float[] absolute,
        FloatBuffer scoreBuffer,
        float[] row) {
      float[] q = new float[keyDim];
      for (int r = from; r < to; r++) {
        int i = first + r;
        System.arraycopy(query, (i * heads + h) * keyDim, q, 0, keyDim);
        if (graph == null) {
          // Row form: for each k, one pass along all sources (contiguous, vectorisable by the JIT).
          // Each row[j] still sums k = 0..keyDim-1 in order, as gatv2Score does.
          Arrays.fill(row, 0f);
          for (int k = 0; k < keyDim; k++) {
            float qk = q[k];
            float c = linear[k];
            float cAbs = absolute[k];
            int at = (h * keyDim + k) * n;
            for (int j = 0; j < n; j++) {
              float x = qk + keyByHead[at + j];
              row[j] += c * x + cAbs * Math.abs(x);
            }
          }
        } else {
          int start = graph.rowStart(i);
          int end = graph.rowEnd(i);
          Arrays.fill(row, start == end ? 0f : Float.NEGATIVE_INFINITY);
          for (int e = start; e < end; e++) {
            int j = graph.column(e);
            row[j] = gatv2Score(q, (j * heads + h) * keyDim, linear, absolute);
          }
        }
        scoreBuffer.put(r * n, row, 0, n);
      }
    }

    /** aᵀ LeakyReLU(q + k_j), term by term as in the row form above. */
    private float gatv2Score(float[] q, int keyAt, float[] linear, float[] absolute) {
      float sum = 0f;
      for (int k = 0; k < keyDim; k++) {
        float x = q[k] + key[keyAt + k];
        sum += linear[k] * x + absolute[k] * Math.abs(x);
      }
      return sum;
    }
  }
}
