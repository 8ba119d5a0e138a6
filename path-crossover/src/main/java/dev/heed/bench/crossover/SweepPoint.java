package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;

/**
 * One measured (or skipped) point of the sweep: one score, node count, density and path.
 *
 * <p>Roofline: for the dense path {@code achieved} is GFLOP/s, counting {@code 2·n²·H·(dk+dv)}
 * flops per call (the score and the value products over all n² pairs; softmax not counted; dk = 1
 * for additive scores), and {@code limit} is the measured GEMM rate. For the sparse path {@code
 * achieved} is million gathered value rows per second, counting E rows per call (one value row of
 * all heads per entry), and {@code limit} is the measured gather rate for a table of n rows.
 *
 * <p>Thread safety: immutable.
 *
 * @param score the score function
 * @param n node count
 * @param density the nominal density asked for
 * @param edges the pattern's entry count E
 * @param path the path
 * @param timing the timings, or null if the point was skipped
 * @param achieved the achieved rate in {@code unit}, or NaN
 * @param limit the measured limit in {@code unit}, or NaN
 * @param unit {@code "GFLOP/s"} or {@code "Mrows/s"}
 * @param note why the point was skipped, or a remark; empty if none
 */
public record SweepPoint(
    SweepScore score,
    int n,
    double density,
    long edges,
    ComputePath path,
    TimingResult timing,
    double achieved,
    double limit,
    String unit,
    String note) {

  /**
   * Returns whether the point was timed.
   *
   * @return true if {@link #timing()} is present
   */
  public boolean measured() {
    return timing != null;
  }

  /**
   * Returns the actual density E / n².
   *
   * @return the density as a fraction
   */
  public double actualDensity() {
    return edges / ((double) n * n);
  }

  /**
   * Returns the fraction of the measured limit reached, {@code achieved / limit}, or NaN.
   *
   * @return the roofline fraction
   */
  public double rooflineFraction() {
    return measured() && limit > 0 ? achieved / limit : Double.NaN;
  }

  /**
   * Returns a copy with a different note.
   *
   * @param newNote the note
   * @return the copy
   */
  public SweepPoint withNote(String newNote) {
    return new SweepPoint(score, n, density, edges, path, timing, achieved, limit, unit, newNote);
  }
}
