package dev.heed.sparse.internal;

import dev.heed.attention.NodeRowPrecision;
import java.util.Objects;

/**
 * Which of its variants a CSR kernel runs, for tests and A/B benchmarks: {@link #DEFAULT} is what
 * {@code AttentionKernels.forPath(ComputePath.SPARSE, options)} gives, and each other value
 * switches one part off so that its effect can be measured or checked. Internal, not API:
 * applications use the default through the kernel provider.
 *
 * <p>Every variant computes the same attention; all but {@code factoredWeights} give the same bits
 * as the default (factored weights agree with the exact softmax to rounding).
 *
 * <p>Thread safety: immutable.
 *
 * @param vectorLoops the Vector API inner loops where the JVM reads {@code jdk.incubator.vector}
 *     (default); false: the plain Java loops, which also keeps every shape on the per-head path
 * @param allHeads additive scores with 8 heads of 8 value floats take the all-heads path (default);
 *     false: the per-head path, like every other shape
 * @param prefetch rows of the next group or block are loaded ahead, one float per cache line, on
 *     the all-heads path and on the per-head path with 64-float key and value rows (default)
 * @param minPackedTableBytes calls on the all-heads path over a CSR graph whose {@link
 *     PackedNodeTable} would have at least this many bytes use one; {@code Long.MAX_VALUE}: never,
 *     0: always
 * @param factoredWeights calls that use the packed node table fill it in its factored layout and
 *     run the factored path (default); false: its exact layout and the exact softmax
 * @param minCostPerThread below this many cost units (entries + rows) per thread, a call uses fewer
 *     threads; 1 uses every thread even for tiny calls (tests)
 * @param nodeRows the precision of the value rows in the factored table ({@link NodeRowPrecision});
 *     {@link NodeRowPrecision#BFLOAT16} uses the table for every call that the factored path
 *     applies to, whatever {@code minPackedTableBytes} says, unless that is {@code Long.MAX_VALUE}
 *     (never a table): the rounding happens when the table is filled
 * @param plainStartWork while the work of this JVM's calls so far (entries × heads, summed over
 *     every kernel with this setting), the call's own included, stays at most this much, a call
 *     runs the plain Java loops (and the per-head path) instead of the Vector API ones: before C2
 *     has compiled them, Vector API loops are many times slower than plain loops, and a short-lived
 *     process never reaches the point where they pay off; 0 (the default): never. Calls with
 *     bfloat16 node rows always take the table ({@code nodeRows}). Plain and vector loops agree to
 *     rounding, not bit for bit
 */
public record CsrKernelVariant(
    boolean vectorLoops,
    boolean allHeads,
    boolean prefetch,
    long minPackedTableBytes,
    boolean factoredWeights,
    long minCostPerThread,
    NodeRowPrecision nodeRows,
    long plainStartWork) {

  /**
   * Calls whose packed node table would be smaller than this many bytes read the caller's key and
   * value arrays in place (their rows stay in cache, and the copy costs more than it saves).
   */
  public static final long DEFAULT_MIN_PACKED_TABLE_BYTES = 16L << 20;

  /**
   * Cost units (entries + rows) per thread below which a call uses fewer threads, so small calls
   * never pay for a hand-off.
   */
  public static final long DEFAULT_MIN_COST_PER_THREAD = 1L << 14;

  /**
   * The one switch for users (README, JVM settings): {@code -Dheed.sparse.pack=false} keeps keys
   * and values in the caller's arrays, for a heap that cannot spare the packed table's 320 bytes
   * per node. Read once, when this class initialises.
   */
  public static final String PACK_PROPERTY = "heed.sparse.pack";

  /**
   * The user's switch for short-lived processes (README, JVM settings): {@code
   * -Dheed.sparse.plainStart=WORK} sets {@link #plainStartWork()} of {@link #DEFAULT} (entries ×
   * heads; 0 or unset: off); {@code heed classify} sets it for its own JVM unless it is given. Read
   * once, when this class initialises.
   */
  public static final String PLAIN_START_PROPERTY = "heed.sparse.plainStart";

  /**
   * The variant applications get: every part on, with the default thresholds (no packed table if
   * {@link #PACK_PROPERTY} is {@code false}).
   */
  public static final CsrKernelVariant DEFAULT =
      new CsrKernelVariant(
          true,
          true,
          true,
          "false".equalsIgnoreCase(System.getProperty(PACK_PROPERTY))
              ? Long.MAX_VALUE
              : DEFAULT_MIN_PACKED_TABLE_BYTES,
          true,
          DEFAULT_MIN_COST_PER_THREAD,
          NodeRowPrecision.FLOAT32,
          plainStartWorkProperty());

  /**
   * Checks the thresholds.
   *
   * @throws IllegalArgumentException if {@code minPackedTableBytes} or {@code plainStartWork} is
   *     negative or {@code minCostPerThread} is below 1
   * @throws NullPointerException if {@code nodeRows} is null
   */
  public CsrKernelVariant {
    Objects.requireNonNull(nodeRows, "nodeRows");
    if (minPackedTableBytes < 0) {
      throw new IllegalArgumentException(
          "minPackedTableBytes must be at least 0 (0: always), got " + minPackedTableBytes);
    }
    if (plainStartWork < 0) {
      throw new IllegalArgumentException(
          "plainStartWork must be at least 0 (0: never), got " + plainStartWork);
    }
    if (minCostPerThread < 1) {
      throw new IllegalArgumentException(
          "minCostPerThread must be at least 1, got " + minCostPerThread);
    }
  }

  /**
   * Returns this variant with the Vector API loops on or off.
   *
   * @param on false for the plain Java loops
   * @return the new variant
   */
  public CsrKernelVariant withVectorLoops(boolean on) {
    return new CsrKernelVariant(
        on,
        allHeads,
        prefetch,
        minPackedTableBytes,
        factoredWeights,
        minCostPerThread,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with the all-heads path on or off.
   *
   * @param on false to keep every shape on the per-head path
   * @return the new variant
   */
  public CsrKernelVariant withAllHeads(boolean on) {
    return new CsrKernelVariant(
        vectorLoops,
        on,
        prefetch,
        minPackedTableBytes,
        factoredWeights,
        minCostPerThread,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with the loads ahead on or off.
   *
   * @param on false for no loads ahead
   * @return the new variant
   */
  public CsrKernelVariant withPrefetch(boolean on) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        on,
        minPackedTableBytes,
        factoredWeights,
        minCostPerThread,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with another packed-table threshold.
   *
   * @param bytes the smallest table used, at least 0; {@code Long.MAX_VALUE}: never
   * @return the new variant
   */
  public CsrKernelVariant withMinPackedTableBytes(long bytes) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        prefetch,
        bytes,
        factoredWeights,
        minCostPerThread,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with factored weights on or off.
   *
   * @param on false for the exact layout of the table and the exact softmax
   * @return the new variant
   */
  public CsrKernelVariant withFactoredWeights(boolean on) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        prefetch,
        minPackedTableBytes,
        on,
        minCostPerThread,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with another threshold for using fewer threads.
   *
   * @param cost cost units per thread, at least 1
   * @return the new variant
   */
  public CsrKernelVariant withMinCostPerThread(long cost) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        prefetch,
        minPackedTableBytes,
        factoredWeights,
        cost,
        nodeRows,
        plainStartWork);
  }

  /**
   * Returns this variant with another precision for the factored table's value rows.
   *
   * @param precision {@link NodeRowPrecision#BFLOAT16} for 16-bit value rows
   * @return the new variant
   */
  public CsrKernelVariant withNodeRows(NodeRowPrecision precision) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        prefetch,
        minPackedTableBytes,
        factoredWeights,
        minCostPerThread,
        precision,
        plainStartWork);
  }

  /**
   * Returns this variant with another plain start.
   *
   * @param work entries × heads of a JVM's first calls that run the plain loops; 0: none
   * @return the new variant
   */
  public CsrKernelVariant withPlainStartWork(long work) {
    return new CsrKernelVariant(
        vectorLoops,
        allHeads,
        prefetch,
        minPackedTableBytes,
        factoredWeights,
        minCostPerThread,
        nodeRows,
        work);
  }

  /**
   * {@link #PLAIN_START_PROPERTY} as a number, 0 when unset.
   *
   * @throws IllegalArgumentException if it is set to something else than a number of at least 0
   */
  private static long plainStartWorkProperty() {
    String text = System.getProperty(PLAIN_START_PROPERTY, "").strip();
    if (text.isEmpty()) {
      return 0;
    }
    try {
      long work = Long.parseLong(text);
      if (work >= 0) {
        return work;
      }
    } catch (NumberFormatException e) {
      // reported below
    }
    throw new IllegalArgumentException(
        "-D"
            + PLAIN_START_PROPERTY
            + "="
            + text
            + ": expected a whole number of entries times heads, at least 0 (0: off)");
  }

  /** Whether calls on the factored path fill a table of bfloat16 value rows. */
  boolean bfloat16Rows() {
    return nodeRows == NodeRowPrecision.BFLOAT16
        && factoredWeights
        && minPackedTableBytes != Long.MAX_VALUE;
  }
}
