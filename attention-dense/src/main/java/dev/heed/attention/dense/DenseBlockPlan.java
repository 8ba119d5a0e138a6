package dev.heed.attention.dense;

import dev.heed.attention.HeadShape;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.attention.ScoreFunction;

/**
 * How one dense call lays out its scratch memory: the per-head repacked inputs, and the height of
 * the block of target rows processed at a time. Immutable.
 *
 * <p>Scratch of one call, in floats (4 bytes each):
 *
 * <ul>
 *   <li>repacked inputs, for all heads: {@code n·H·(dv + 1)} for the values with a column of ones
 *       (so the second product also yields each row's sum of weights), plus {@code 2·n·H·w} for the
 *       query and key terms when scores are formed in ND4J ({@code w = keyDim} for scaled
 *       dot-product, {@code w = 1} for additive scores, packed as a column and a row); GATv2 scores
 *       read the caller's arrays directly and pack nothing;
 *   <li>per block row: {@code n} for the score row, {@code n} more for the mask row when the
 *       pattern is a CSR mask and scores are formed in ND4J, {@code dv + 1} for the output and 1
 *       for the row sum;
 *   <li>Java scratch: one score row of {@code n} floats per worker thread, and for GATv2 over the
 *       complete pattern the keys transposed per head ({@code n·H·keyDim}), so that the score loop
 *       runs along contiguous rows.
 * </ul>
 *
 * <p>When a call splits its blocks over its threads, each thread holds a block of its own: the
 * per-row scratch is held {@code blockCopies} times, and blocks are short enough that every thread
 * gets at least two.
 *
 * @param blockRows target rows per block, in {@code 1..n}
 * @param fixedBytes bytes that do not depend on the block height (repacked inputs, Java scratch)
 * @param bytesPerBlockRow bytes each row of one block adds
 * @param blockCopies blocks held at once: 1, or the threads a split call runs its blocks on
 */
record DenseBlockPlan(int blockRows, long fixedBytes, long bytesPerBlockRow, int blockCopies) {

  /**
   * Default upper bound on one score block, in floats (4 MiB): large enough that each ND4J call
   * handles a big batch of work (every call costs microseconds), small enough that the block stays
   * near the caches. Tuned on the benchmark machine; see benchmarks/results/dense-kernel.md.
   */
  static final long DEFAULT_TARGET_BLOCK_FLOATS = 1L << 20;

  /**
   * Default upper bound on each thread's score block when a call splits its blocks over its
   * threads, in floats (8 MiB): each block's products run on one BLAS thread, which packs the other
   * operand (a head's keys or values) once per product, so taller blocks pack less. Measured on 2
   * cores (n = 4096, 8 × 64, dot-product scores, process CPU time per call): 480 ms with 512 rows,
   * 500–520 ms with 256, 480–490 ms with 1024 (benchmarks/RESULTS.md, "Dense path").
   */
  static final long SPLIT_TARGET_BLOCK_FLOATS = 1L << 21;

  /**
   * Block height the target never goes below on large n (a matrix product with very few rows runs
   * far below BLAS speed); only the memory budget can make blocks shorter.
   */
  static final long MIN_TARGET_ROWS = 64;

  /**
   * Returns the bytes the call will allocate with this block height.
   *
   * @return total scratch bytes
   */
  long bytesUsed() {
    return fixedBytes + bytesPerBlockRow * blockRows * blockCopies;
  }

  /**
   * Plans one call.
   *
   * @param n node count, at least 1
   * @param score the score function
   * @param shape heads and widths
   * @param masked whether the pattern is a CSR mask (not the complete pattern)
   * @param javaThreads threads that each hold one Java score row
   * @param budgetBytes the dense memory budget
   * @param targetBlockFloats upper bound on {@code blockRows · n}, unless that leaves fewer than
   *     {@code minTargetRows} rows
   * @param minTargetRows the least block height the target allows ({@link #MIN_TARGET_ROWS})
   * @return the plan, one block at a time
   * @throws MemoryBudgetExceededException if even a one-row block does not fit the budget
   */
  static DenseBlockPlan of(
      int n,
      ScoreFunction score,
      HeadShape shape,
      boolean masked,
      int javaThreads,
      long budgetBytes,
      long targetBlockFloats,
      long minTargetRows) {
    return of(
        n, score, shape, masked, javaThreads, budgetBytes, targetBlockFloats, minTargetRows, 1);
  }

  /**
   * Returns whether the budget holds a one-row block per copy: whether {@link #of(int,
   * ScoreFunction, HeadShape, boolean, int, long, long, long, int)} would succeed.
   *
   * @param n node count, at least 1
   * @param score the score function
   * @param shape heads and widths
   * @param masked whether the pattern is a CSR mask
   * @param javaThreads threads that each hold one Java score row
   * @param budgetBytes the dense memory budget
   * @param blockCopies blocks held at once
   * @return true if a plan fits
   */
  static boolean fits(
      int n,
      ScoreFunction score,
      HeadShape shape,
      boolean masked,
      int javaThreads,
      long budgetBytes,
      int blockCopies) {
    return fixedBytes(n, score, shape, masked, javaThreads)
            + perRowBytes(n, score, shape, masked) * blockCopies
        <= budgetBytes;
  }

  private static long fixedBytes(
      int n, ScoreFunction score, HeadShape shape, boolean masked, int javaThreads) {
    long heads = shape.heads();
    boolean nd4jScores = !(score instanceof ScoreFunction.Gatv2);
    long packedKeyWidth = shape.keyDim();
    long packedFloats =
        (long) n * heads * (shape.valueDim() + 1)
            + (nd4jScores ? 2L * n * heads * packedKeyWidth : 0);
    boolean gatv2 = score instanceof ScoreFunction.Gatv2;
    long javaScratchFloats =
        (long) n * javaThreads + (gatv2 && !masked ? (long) n * heads * shape.keyDim() : 0);
    return 4 * (packedFloats + javaScratchFloats);
  }

  private static long perRowBytes(int n, ScoreFunction score, HeadShape shape, boolean masked) {
    boolean nd4jScores = !(score instanceof ScoreFunction.Gatv2);
    return 4 * ((masked && nd4jScores ? 2L : 1L) * n + shape.valueDim() + 2);
  }

  /**
   * Plans one call whose threads may each hold a block.
   *
   * @param n node count, at least 1
   * @param score the score function
   * @param shape heads and widths
   * @param masked whether the pattern is a CSR mask (not the complete pattern)
   * @param javaThreads threads that each hold one Java score row
   * @param budgetBytes the dense memory budget
   * @param targetBlockFloats upper bound on {@code blockRows · n}, unless that leaves fewer than
   *     {@code minTargetRows} rows
   * @param minTargetRows the least block height the target allows ({@link #MIN_TARGET_ROWS})
   * @param blockCopies blocks held at once (1, or the threads of a split call)
   * @return the plan
   * @throws MemoryBudgetExceededException if even one one-row block per copy does not fit the
   *     budget
   */
  static DenseBlockPlan of(
      int n,
      ScoreFunction score,
      HeadShape shape,
      boolean masked,
      int javaThreads,
      long budgetBytes,
      long targetBlockFloats,
      long minTargetRows,
      int blockCopies) {
    assert n >= 1 && javaThreads >= 1 && targetBlockFloats >= 1 && minTargetRows >= 1;
    assert blockCopies >= 1;
    long fixedBytes = fixedBytes(n, score, shape, masked, javaThreads);
    long perRowBytes = perRowBytes(n, score, shape, masked);
    long minimum = fixedBytes + perRowBytes * blockCopies;
    if (minimum > budgetBytes) {
      throw new MemoryBudgetExceededException(
          "dense attention over n = "
              + n
              + " nodes ("
              + shape.heads()
              + " heads, keyDim "
              + shape.keyDim()
              + ", valueDim "
              + shape.valueDim()
              + ", "
              + score
              + ") needs at least "
              + minimum
              + " bytes of scratch ("
              + fixedBytes
              + " for the per-head repacked inputs and Java scratch + "
              + perRowBytes * blockCopies
              + (blockCopies == 1 ? " for a one-row block" : " for a one-row block per thread")
              + "), but the dense memory budget is "
              + budgetBytes
              + " bytes; use the sparse path (ComputePath.SPARSE, dependency"
              + " dev.heed:attention-sparse) for sparse graphs, or raise"
              + " KernelOptions.denseMemoryBudgetBytes to at least "
              + minimum,
          minimum,
          budgetBytes);
    }
    long byBudget = (budgetBytes - fixedBytes) / (perRowBytes * blockCopies);
    long byTarget = Math.max(minTargetRows, targetBlockFloats / n);
    if (blockCopies > 1) {
      // two blocks or more per thread: the threads take blocks in turn, so the last ones to
      // finish wait for at most one block
      long byThreads = (n + 2L * blockCopies - 1) / (2L * blockCopies);
      byTarget = Math.min(byTarget, Math.max(minTargetRows, byThreads));
    }
    int rows = (int) Math.min(n, Math.min(byBudget, byTarget));
    return new DenseBlockPlan(rows, fixedBytes, perRowBytes, blockCopies);
  }
}
