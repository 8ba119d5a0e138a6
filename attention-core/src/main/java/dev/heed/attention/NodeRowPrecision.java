package dev.heed.attention;

/**
 * How a sparse kernel stores the node rows it gathers at random (each source's value row), when it
 * copies them into a table of its own before the rows run. Chosen per kernel with {@link
 * KernelOptions#withNodeRowPrecision} (and per classifier with {@code
 * ClassifyOptions.withNodeRowPrecision}); the default, {@link #FLOAT32}, reads exactly the caller's
 * floats.
 *
 * <p><b>Where it applies.</b> The CSR kernel's path for GAT (additive) scores with 8 heads of 8
 * value floats over a {@link dev.heed.graph.CsrGraph}: its node table then holds each node's value
 * row as 16-bit floats, so a neighbour costs 3 cache lines instead of 5 (192 bytes per node instead
 * of 320). Every other score, shape or pattern, and the dense path, read float32 rows whatever this
 * says. Scores, softmax weights and sums stay float32: only the value rows are rounded.
 *
 * <p><b>Error bound.</b> {@link #BFLOAT16} keeps 8 significand bits (7 stored, common practice for
 * the format), so rounding to nearest changes each value by at most {@code 2^-8} of its magnitude
 * (the unit roundoff {@code u = 2^-p} for {@code p} significand bits; Higham, <i>Accuracy and
 * Stability of Numerical Algorithms</i>, 2nd ed., 2002, §2.1). An output is a convex combination
 * {@code out = Σ α_j v_j} with float32 weights, so rounding the values adds at most
 *
 * <pre>
 *   |Δout| ≤ Σ α_j |v̂_j − v_j| ≤ 2^-8 · Σ α_j |v_j| ≤ 2^-8 · max_j |v_j|
 * </pre>
 *
 * to the float32 path's own error, per output float (j over the row's sources, the same head and
 * value column). IEEE binary16 would give {@code 2^-11} with 11 significand bits, but only within
 * its range (largest finite value 65504, full precision down to {@code 2^-14}); bfloat16 has
 * float32's exponent range, so every finite float rounds to a finite value with the bound above
 * (values beyond the largest finite bfloat16, about {@code 3.39e38}, are clamped to it, which is
 * within the same bound), and decoding it is one shift.
 *
 * <p>Thread safety: an enum; immutable.
 */
public enum NodeRowPrecision {

  /** Value rows as the caller's float32 values (the default). */
  FLOAT32,

  /**
   * Value rows rounded to bfloat16 (8 significand bits, float32's exponent range), accumulated in
   * float32: at most {@link #BFLOAT16_UNIT_ROUNDOFF} times {@code Σ α_j |v_j|} more error per
   * output float than {@link #FLOAT32}.
   */
  BFLOAT16;

  /** The unit roundoff of bfloat16 (8 significand bits): {@code 2^-8}. */
  public static final double BFLOAT16_UNIT_ROUNDOFF = 0x1p-8;
}
