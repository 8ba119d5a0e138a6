package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.KernelOptions;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CompletePattern;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;
import org.nd4j.linalg.factory.Nd4j;

/**
 * The switching of the BLAS thread count between small, split and large dense work: lazy after
 * small calls, at once after split ones.
 */
class BlasThreadModeTest {

  /** A BLAS thread count that records every change. */
  private static final class FakeBlas {
    int threads;
    final List<Integer> changes = new ArrayList<>();

    FakeBlas(int threads) {
      this.threads = threads;
    }

    BlasThreadMode mode(boolean enabled) {
      return new BlasThreadMode(
          enabled,
          () -> threads,
          t -> {
            threads = t;
            changes.add(t);
          });
    }
  }

  @Test
  void smallCallsSwitchOnceAndALargeCallSwitchesBack() {
    FakeBlas blas = new FakeBlas(4);
    BlasThreadMode mode = blas.mode(true);
    for (int i = 0; i < 3; i++) {
      mode.enterSmall();
      assertEquals(1, blas.threads);
      mode.exitSmall();
    }
    assertEquals(List.of(1), blas.changes, "switched once for three small calls in a row");
    mode.enterLarge();
    assertEquals(4, blas.threads);
    mode.exitLarge();
    mode.enterLarge();
    mode.exitLarge();
    assertEquals(List.of(1, 4), blas.changes);
  }

  @Test
  void overlappingCallsKeepTheModeThatIsSet() {
    FakeBlas blas = new FakeBlas(2);
    BlasThreadMode mode = blas.mode(true);
    mode.enterLarge();
    mode.enterSmall(); // a large call is running: its products keep two threads
    assertEquals(2, blas.threads);
    mode.exitSmall();
    mode.exitLarge();
    mode.enterSmall();
    mode.enterLarge(); // a small call is running: the large one waits for nothing, one thread stays
    assertEquals(1, blas.threads);
    mode.exitLarge();
    mode.exitSmall();
    mode.enterLarge();
    assertEquals(2, blas.threads);
    mode.exitLarge();
    assertEquals(List.of(1, 2), blas.changes);
  }

  @Test
  void aSplitCallSetsOneThreadAndRestoresTheCountWhenItEnds() {
    FakeBlas blas = new FakeBlas(4);
    BlasThreadMode mode = blas.mode(true);
    assertEquals(4, mode.splitThreads());
    mode.enterSplit();
    assertEquals(1, blas.threads);
    assertEquals(4, mode.splitThreads(), "the process's count, not the one set for the call");
    mode.enterSplit(); // a second split call on another thread
    mode.exitSplit();
    assertEquals(1, blas.threads, "restored only after the last split call");
    mode.exitSplit();
    assertEquals(4, blas.threads);
    assertEquals(List.of(1, 4), blas.changes);
  }

  @Test
  void aSplitCallLeavesTheModeOfOverlappingCalls() {
    FakeBlas blas = new FakeBlas(2);
    BlasThreadMode mode = blas.mode(true);
    mode.enterSmall();
    mode.exitSmall(); // one thread left set by the small call
    mode.enterSmall();
    mode.enterSplit();
    mode.exitSplit(); // a small call is still running: one thread stays
    assertEquals(1, blas.threads);
    mode.exitSmall();
    mode.enterSplit();
    mode.exitSplit(); // nothing else running: the count comes back
    assertEquals(2, blas.threads);
    mode.enterLarge();
    mode.enterSplit(); // a large call uses BLAS's threads: the split call shares them
    assertEquals(2, blas.threads);
    mode.exitSplit();
    mode.exitLarge();
    assertEquals(List.of(1, 2), blas.changes);
  }

  @Test
  void turnedOffNoCallSplits() {
    FakeBlas blas = new FakeBlas(8);
    BlasThreadMode mode = blas.mode(false);
    assertEquals(1, mode.splitThreads());
    mode.enterSplit();
    mode.exitSplit();
    assertEquals(List.of(), blas.changes);
  }

  @Test
  void aSingleThreadedProcessIsLeftAlone() {
    FakeBlas blas = new FakeBlas(1);
    oneSmallThenOneLarge(blas.mode(true));
    assertEquals(List.of(), blas.changes);
  }

  @Test
  void turnedOffItNeverSwitches() {
    FakeBlas blas = new FakeBlas(8);
    oneSmallThenOneLarge(blas.mode(false));
    assertEquals(List.of(), blas.changes);
  }

  private static void oneSmallThenOneLarge(BlasThreadMode mode) {
    mode.enterSmall();
    mode.exitSmall();
    mode.enterLarge();
    mode.exitLarge();
  }

  /**
   * The dense kernel itself: a small call leaves ND4J's BLAS on one thread, a large one restores
   * the process's count (checked only where the process has more than one BLAS thread).
   */
  @Test
  void theDenseKernelSwitchesNd4jsCount() {
    AttentionKernel dense =
        AttentionKernels.forPath(ComputePath.DENSE, KernelOptions.defaults().withThreads(2));
    BlasThreadMode.process().enterLarge(); // start from the process's own count
    BlasThreadMode.process().exitLarge();
    int processThreads = Nd4j.factory().blas().getMaxThreads();
    attend(dense, 64);
    assertEquals(processThreads > 1 ? 1 : processThreads, Nd4j.factory().blas().getMaxThreads());
    attend(dense, 800);
    assertEquals(processThreads, Nd4j.factory().blas().getMaxThreads());
  }

  private static void attend(AttentionKernel kernel, int n) {
    HeadShape shape = new HeadShape(2, 4, 4);
    SplittableRandom random = new SplittableRandom(n);
    float[] q = new float[n * shape.keyWidth()];
    float[] k = new float[q.length];
    float[] v = new float[n * shape.valueWidth()];
    for (float[] a : new float[][] {q, k, v}) {
      for (int i = 0; i < a.length; i++) {
        a[i] = (float) (random.nextDouble() * 2 - 1);
      }
    }
    kernel.attend(
        CompletePattern.of(n),
        ScoreFunction.scaledDotProduct(),
        shape,
        q,
        k,
        v,
        new float[v.length],
        null);
  }
}
