package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.MemoryBudgetExceededException;
import dev.heed.attention.ScoreFunction;
import org.junit.jupiter.api.Test;

/** Block planning: the budget arithmetic documented on {@link DenseBlockPlan}. */
class DenseBlockPlanTest {

  static final ScoreFunction DOT = ScoreFunction.scaledDotProduct();
  static final HeadShape SHAPE = new HeadShape(8, 64, 64);

  static DenseBlockPlan plan(int n, boolean masked, long budget) {
    return DenseBlockPlan.of(
        n,
        DOT,
        SHAPE,
        masked,
        1,
        budget,
        DenseBlockPlan.DEFAULT_TARGET_BLOCK_FLOATS,
        DenseBlockPlan.MIN_TARGET_ROWS);
  }

  @Test
  void defaultBlockIsFourMebibytesOfScores() {
    assertEquals(256, plan(4096, false, 512L << 20).blockRows());
    assertEquals(1024, plan(1024, false, 512L << 20).blockRows());
    assertEquals(7, plan(7, false, 512L << 20).blockRows());
  }

  @Test
  void largeNKeepsAtLeastTheMinimumRowsWhenTheBudgetAllows() {
    assertEquals(64, plan(100_000, false, 4L << 30).blockRows());
  }

  @Test
  void budgetBoundIsExact() {
    int n = 5000;
    DenseBlockPlan free = plan(n, true, Long.MAX_VALUE);
    long minimum = free.fixedBytes() + free.bytesPerBlockRow();
    // Packed: Q, K 2·n·H·64, V with ones n·H·65, Java row n; per row: score + mask rows 2n,
    // output 65, row sum 1.
    assertEquals(4L * (2L * n * 8 * 64 + (long) n * 8 * 65 + n), free.fixedBytes());
    assertEquals(4L * (2L * n + 65 + 1), free.bytesPerBlockRow());
    assertEquals(1, plan(n, true, minimum).blockRows());
    assertEquals(2, plan(n, true, minimum + free.bytesPerBlockRow()).blockRows());
    MemoryBudgetExceededException e =
        assertThrows(MemoryBudgetExceededException.class, () -> plan(n, true, minimum - 1));
    assertEquals(minimum, e.bytesNeeded());
    assertEquals(minimum - 1, e.budgetBytes());
    assertTrue(e.getMessage().contains("sparse"), e.getMessage());
  }

  static DenseBlockPlan splitPlan(int n, long budget, int threads) {
    return DenseBlockPlan.of(
        n,
        DOT,
        SHAPE,
        false,
        threads,
        budget,
        DenseBlockPlan.SPLIT_TARGET_BLOCK_FLOATS,
        DenseBlockPlan.MIN_TARGET_ROWS,
        threads);
  }

  @Test
  void aSplitCallHoldsOneBlockPerThreadAndAtLeastTwoBlocksEach() {
    DenseBlockPlan plan = splitPlan(4096, 512L << 20, 2);
    assertEquals(512, plan.blockRows(), "8 MiB of scores per thread");
    assertEquals(plan.fixedBytes() + 2 * 512 * plan.bytesPerBlockRow(), plan.bytesUsed());
    assertEquals(256, splitPlan(1024, 512L << 20, 2).blockRows(), "two blocks per thread");
    assertEquals(64, splitPlan(1024, 512L << 20, 16).blockRows(), "never below the minimum");
  }

  @Test
  void aSplitCallFitsOnlyWhenTheBudgetHoldsABlockPerThread() {
    int n = 4096;
    DenseBlockPlan free = splitPlan(n, Long.MAX_VALUE, 2);
    long minimum = free.fixedBytes() + 2 * free.bytesPerBlockRow();
    assertTrue(DenseBlockPlan.fits(n, DOT, SHAPE, false, 2, minimum, 2));
    assertFalse(DenseBlockPlan.fits(n, DOT, SHAPE, false, 2, minimum - 1, 2));
    assertEquals(1, splitPlan(n, minimum, 2).blockRows());
    MemoryBudgetExceededException e =
        assertThrows(MemoryBudgetExceededException.class, () -> splitPlan(n, minimum - 1, 2));
    assertEquals(minimum, e.bytesNeeded());
    assertTrue(e.getMessage().contains("per thread"), e.getMessage());
  }

  @Test
  void gatv2OverTheCompletePatternCountsItsTransposedKeys() {
    HeadShape shape = new HeadShape(2, 16, 8);
    ScoreFunction gatv2 = ScoreFunction.gatv2(0.2f, new float[32]);
    int n = 100;
    DenseBlockPlan complete = DenseBlockPlan.of(n, gatv2, shape, false, 3, 1L << 30, 1L << 20, 64);
    DenseBlockPlan masked = DenseBlockPlan.of(n, gatv2, shape, true, 3, 1L << 30, 1L << 20, 64);
    // Values n·H·(dv + 1), three Java rows; the complete pattern adds keys n·H·keyDim.
    assertEquals(4L * (n * 2 * 9 + 3 * n), masked.fixedBytes());
    assertEquals(4L * (n * 2 * 9 + 3 * n + n * 2 * 16), complete.fixedBytes());
    // GATv2 scores are written by Java, so no mask block: one score row per block row.
    assertEquals(masked.bytesPerBlockRow(), complete.bytesPerBlockRow());
  }
}
