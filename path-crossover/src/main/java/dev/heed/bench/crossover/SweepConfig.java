package dev.heed.bench.crossover;

import dev.heed.attention.KernelOptions;
import java.util.List;

/**
 * What the crossover sweep runs: the grid (node counts × densities × scores, both paths at each),
 * the head shape, threads, seed, timing policy and the caps that keep it within reach.
 *
 * <p>Use {@link #fullSweep()} or {@link #quickSweep()} and adjust with the {@code with…} methods:
 *
 * <pre>{@code
 * SweepConfig config = SweepConfig.quickSweep().withNodeCounts(List.of(256, 512)).withThreads(2);
 * }</pre>
 *
 * <p>Thread safety: immutable.
 *
 * @param nodeCounts node counts n, each at least 1; copied
 * @param densities densities as fractions in (0, 1] (1 = complete pattern); copied
 * @param scores the score functions to sweep; copied
 * @param heads heads H, at least 1
 * @param keyDim query/key width per head for dot-product scores (additive uses 1), at least 1
 * @param valueDim value width per head, at least 1
 * @param threads kernel threads, at least 1
 * @param seed seed for graphs and inputs
 * @param timing warm-up and repetition rules
 * @param maxCallSeconds a point whose single call is estimated to take longer is skipped (and said
 *     so), positive
 * @param denseMemoryBudgetBytes the dense kernel's scratch budget, at least 1 MiB
 * @param maxSweepSeconds once the sweep has run this long, the remaining points are skipped (and
 *     said so); 0 for no limit
 * @param quick whether this is the quick mode (shorter limit measurements, too)
 */
public record SweepConfig(
    List<Integer> nodeCounts,
    List<Double> densities,
    List<SweepScore> scores,
    int heads,
    int keyDim,
    int valueDim,
    int threads,
    long seed,
    TimingPolicy timing,
    double maxCallSeconds,
    long denseMemoryBudgetBytes,
    double maxSweepSeconds,
    boolean quick) {

  /** The quick sweep's overall limit in seconds, {@value}: it must end within 3 minutes. */
  public static final double QUICK_SWEEP_SECONDS = 140;

  /** The default seed. */
  public static final long DEFAULT_SEED = 20_260_601L;

  /**
   * Validates and copies.
   *
   * @throws IllegalArgumentException if a value is out of range, saying which
   */
  public SweepConfig {
    nodeCounts = List.copyOf(nodeCounts);
    densities = List.copyOf(densities);
    scores = List.copyOf(scores);
    if (nodeCounts.isEmpty() || densities.isEmpty() || scores.isEmpty()) {
      throw new IllegalArgumentException(
          "the sweep needs at least one node count, density and score, got "
              + nodeCounts
              + ", "
              + densities
              + ", "
              + scores);
    }
    for (int n : nodeCounts) {
      if (n < 1) {
        throw new IllegalArgumentException("node counts must be at least 1, got " + n);
      }
    }
    for (double d : densities) {
      if (!(d > 0 && d <= 1)) {
        throw new IllegalArgumentException(
            "densities are fractions in (0, 1] (0.01 = 1 %), got " + d);
      }
    }
    if (heads < 1 || keyDim < 1 || valueDim < 1 || threads < 1) {
      throw new IllegalArgumentException(
          "heads, keyDim, valueDim and threads must be at least 1, got "
              + heads
              + ", "
              + keyDim
              + ", "
              + valueDim
              + ", "
              + threads);
    }
    if (timing == null) {
      throw new IllegalArgumentException("timing policy is required");
    }
    if (!(maxCallSeconds > 0)) {
      throw new IllegalArgumentException("maxCallSeconds must be positive, got " + maxCallSeconds);
    }
    if (!(maxSweepSeconds >= 0)) {
      throw new IllegalArgumentException(
          "maxSweepSeconds must be 0 (no limit) or positive, got " + maxSweepSeconds);
    }
    new KernelOptions(threads, denseMemoryBudgetBytes); // validates the budget
  }

  /**
   * The full sweep: n ∈ {256, 1024, 4096, 16384}, density ∈ {0.1, 0.3, 1, 3, 10, 30, 100} %, both
   * scores, 4 heads × 16 key dims × 16 value dims, all processors, {@link TimingPolicy#full()},
   * calls estimated over 5 s skipped, no overall time limit.
   *
   * @return the configuration
   */
  public static SweepConfig fullSweep() {
    return new SweepConfig(
        List.of(256, 1024, 4096, 16384),
        List.of(0.001, 0.003, 0.01, 0.03, 0.1, 0.3, 1.0),
        List.of(SweepScore.ADDITIVE, SweepScore.DOT_PRODUCT),
        4,
        16,
        16,
        Runtime.getRuntime().availableProcessors(),
        DEFAULT_SEED,
        TimingPolicy.full(),
        5.0,
        KernelOptions.DEFAULT_DENSE_MEMORY_BUDGET_BYTES,
        0,
        false);
  }

  /**
   * The quick sweep, under 3 minutes on 2 cores: n ∈ {512, 2048}, density ∈ {0.3, 1, 3, 10, 30,
   * 100} %, both scores, the same shape, {@link TimingPolicy#quick()}, calls estimated over 1 s
   * skipped, and points still left after {@value #QUICK_SWEEP_SECONDS} s skipped.
   *
   * @return the configuration
   */
  public static SweepConfig quickSweep() {
    return new SweepConfig(
        List.of(512, 2048),
        List.of(0.003, 0.01, 0.03, 0.1, 0.3, 1.0),
        List.of(SweepScore.ADDITIVE, SweepScore.DOT_PRODUCT),
        4,
        16,
        16,
        Runtime.getRuntime().availableProcessors(),
        DEFAULT_SEED,
        TimingPolicy.quick(),
        1.0,
        KernelOptions.DEFAULT_DENSE_MEMORY_BUDGET_BYTES,
        QUICK_SWEEP_SECONDS,
        true);
  }

  /**
   * Returns the number of points: node counts × densities × scores × 2 paths.
   *
   * @return the point count
   */
  public int pointCount() {
    return nodeCounts.size() * densities.size() * scores.size() * 2;
  }

  /**
   * Returns the kernel options for this sweep.
   *
   * @return threads and dense budget
   */
  public KernelOptions kernelOptions() {
    return new KernelOptions(threads, denseMemoryBudgetBytes);
  }

  /**
   * Returns a copy with other node counts.
   *
   * @param newNodeCounts the node counts
   * @return the copy
   */
  public SweepConfig withNodeCounts(List<Integer> newNodeCounts) {
    return new SweepConfig(
        newNodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with other densities.
   *
   * @param newDensities fractions in (0, 1]
   * @return the copy
   */
  public SweepConfig withDensities(List<Double> newDensities) {
    return new SweepConfig(
        nodeCounts,
        newDensities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with other scores.
   *
   * @param newScores the scores
   * @return the copy
   */
  public SweepConfig withScores(List<SweepScore> newScores) {
    return new SweepConfig(
        nodeCounts,
        densities,
        newScores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another head shape.
   *
   * @param newHeads heads
   * @param newKeyDim key width per head for dot-product scores
   * @param newValueDim value width per head
   * @return the copy
   */
  public SweepConfig withShape(int newHeads, int newKeyDim, int newValueDim) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        newHeads,
        newKeyDim,
        newValueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another thread count.
   *
   * @param newThreads at least 1
   * @return the copy
   */
  public SweepConfig withThreads(int newThreads) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        newThreads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another seed.
   *
   * @param newSeed the seed
   * @return the copy
   */
  public SweepConfig withSeed(long newSeed) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        newSeed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another timing policy.
   *
   * @param newTiming the policy
   * @return the copy
   */
  public SweepConfig withTiming(TimingPolicy newTiming) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        newTiming,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another per-call cap.
   *
   * @param seconds positive
   * @return the copy
   */
  public SweepConfig withMaxCallSeconds(double seconds) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        seconds,
        denseMemoryBudgetBytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another dense memory budget.
   *
   * @param bytes at least 1 MiB
   * @return the copy
   */
  public SweepConfig withDenseMemoryBudgetBytes(long bytes) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        bytes,
        maxSweepSeconds,
        quick);
  }

  /**
   * Returns a copy with another overall time limit.
   *
   * @param seconds 0 for none, otherwise positive
   * @return the copy
   */
  public SweepConfig withMaxSweepSeconds(double seconds) {
    return new SweepConfig(
        nodeCounts,
        densities,
        scores,
        heads,
        keyDim,
        valueDim,
        threads,
        seed,
        timing,
        maxCallSeconds,
        denseMemoryBudgetBytes,
        seconds,
        quick);
  }
}
