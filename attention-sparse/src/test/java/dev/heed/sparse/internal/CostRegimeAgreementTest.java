package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.CostRegime;
import dev.heed.attention.internal.CostRegime.CallSize;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * The path cost model in the core predicts the sparse kernel's time by the regime the kernel runs
 * in; its copy of the kernel's rules must match the kernel's own.
 */
class CostRegimeAgreementTest {

  private static final List<ScoreFunction> SCORES =
      List.of(
          ScoreFunction.additive(0.2f),
          ScoreFunction.scaledDotProduct(),
          ScoreFunction.gatv2(0.2f, new float[64]));

  @Test
  void thresholdsMatchTheKernels() {
    assertEquals(
        CsrKernelVariant.DEFAULT_MIN_PACKED_TABLE_BYTES, CostRegime.PACKED_TABLE_MIN_BYTES);
    assertEquals(
        CsrKernelVariant.DEFAULT_MIN_COST_PER_THREAD, CostRegime.SPARSE_MIN_COST_PER_THREAD);
    assertEquals(4 * PackedNodeTable.FACTORED_ROW, CostRegime.PACKED_ROW_BYTES);
    assertEquals(AllHeadsMath.HEADS, CostRegime.ALL_HEADS_HEADS);
    assertEquals(PerHeadPass.ROW_ENTRIES, CostRegime.WHOLE_ROW_MAX_ENTRIES);
  }

  @Test
  void wholeRowChoicesMatchTheKernels() {
    PerHeadMath math = RowMaths.preferred().perHead();
    List<HeadShape> shapes =
        List.of(
            new HeadShape(4, 16, 16),
            new HeadShape(4, 1, 16),
            new HeadShape(8, 8, 8),
            new HeadShape(4, 16, 8),
            new HeadShape(2, 16, 16));
    int n = 2048;
    for (ScoreFunction score : SCORES) {
      for (HeadShape shape : shapes) {
        for (int degree : new int[] {8, CostRegime.WHOLE_ROW_MAX_ENTRIES, 1536}) {
          for (boolean complete : new boolean[] {false, true}) {
            long entries = complete ? (long) n * n : (long) n * degree;
            CallSize size = new CallSize(n, entries, complete, score, shape, 2);
            boolean kernelWhole =
                score instanceof ScoreFunction.ScaledDotProduct
                    && !complete
                    && degree <= PerHeadPass.ROW_ENTRIES
                    && math.scoresWholeRows(shape.heads(), shape.keyDim(), shape.valueDim());
            assertEquals(
                kernelWhole,
                CostRegime.takesWholeRows(size),
                "whole rows: "
                    + score
                    + " "
                    + shape
                    + " degree="
                    + degree
                    + " complete="
                    + complete);
          }
        }
      }
    }
  }

  @Test
  void allHeadsAndPackedChoicesMatchTheKernels() {
    CsrAttentionKernel kernel = CsrAttentionKernel.create(2);
    int firstPacked = 0;
    while (PackedNodeTable.bytes(firstPacked) < CsrKernelVariant.DEFAULT_MIN_PACKED_TABLE_BYTES) {
      firstPacked++;
    }
    List<HeadShape> shapes =
        List.of(new HeadShape(8, 1, 8), new HeadShape(8, 8, 8), new HeadShape(4, 1, 16));
    for (ScoreFunction score : SCORES) {
      for (HeadShape shape : shapes) {
        if (score instanceof ScoreFunction.Additive && shape.keyDim() != 1) {
          continue;
        }
        for (int n : new int[] {100, firstPacked - 1, firstPacked}) {
          for (boolean complete : new boolean[] {false, true}) {
            CostRegime regime =
                CostRegime.of(
                    ComputePath.SPARSE, new CallSize(n, 10L * n, complete, score, shape, 2));
            boolean allHeads = kernel.takesAllHeadsPath(score, shape);
            boolean packed =
                allHeads
                    && !complete
                    && PackedNodeTable.bytes(n) >= CsrKernelVariant.DEFAULT_MIN_PACKED_TABLE_BYTES;
            String where = score + " " + shape + " n=" + n + " complete=" + complete;
            assertEquals(
                packed, regime == CostRegime.SPARSE_ALL_HEADS_PACKED, "packed table: " + where);
            assertEquals(
                allHeads,
                regime == CostRegime.SPARSE_ALL_HEADS
                    || regime == CostRegime.SPARSE_ALL_HEADS_PACKED,
                "all-heads path: " + where);
          }
        }
      }
    }
  }
}
