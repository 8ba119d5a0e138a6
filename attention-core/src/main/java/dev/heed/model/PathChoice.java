package dev.heed.model;

import dev.heed.attention.ComputePath;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;

/**
 * Which attention kernel a model call uses, per attention layer.
 *
 * <p>{@link #AUTO} applies a fixed rule to the pattern the layer attends over, until a calibrated
 * choice replaces it: the complete pattern, or a pattern with at most {@value
 * #AUTO_DENSE_MAX_NODES} nodes and density (E / n²) at least {@value #AUTO_DENSE_MIN_DENSITY}, goes
 * to {@link ComputePath#DENSE}; everything else to {@link ComputePath#SPARSE}. (The thresholds
 * follow the crossover sweep recorded in {@code benchmarks/RESULTS.md}: on the 2-core reference
 * machine the sparse path was faster below about 30–60 % density at every n measured, and the dense
 * path won only on nearly complete patterns; measure your own hardware with {@code heed bench
 * crossover}.) If the kernel AUTO picked is not on the class path, AUTO uses the other one and logs
 * a warning; an explicit {@link #DENSE} or {@link #SPARSE} fails instead.
 *
 * <p>Thread safety: an enum, immutable.
 */
public enum PathChoice {
  /** Always the dense (ND4J) kernel. */
  DENSE,
  /** Always the sparse (CSR) kernel; needs {@code dev.heed:attention-sparse}. */
  SPARSE,
  /** The rule in the class comment. */
  AUTO;

  /** Largest node count AUTO sends to the dense path unless the pattern is complete. */
  public static final int AUTO_DENSE_MAX_NODES = 4096;

  /** Smallest density AUTO sends to the dense path unless the pattern is complete. */
  public static final double AUTO_DENSE_MIN_DENSITY = 0.5;

  /**
   * Returns the path this choice takes for a pattern (for AUTO, before any fallback).
   *
   * @param pattern the pattern an attention layer attends over
   * @return the path
   */
  public ComputePath pathFor(AttentionPattern pattern) {
    return switch (this) {
      case DENSE -> ComputePath.DENSE;
      case SPARSE -> ComputePath.SPARSE;
      case AUTO ->
          pattern instanceof CompletePattern
                  || (pattern.nodeCount() <= AUTO_DENSE_MAX_NODES
                      && pattern.density() >= AUTO_DENSE_MIN_DENSITY)
              ? ComputePath.DENSE
              : ComputePath.SPARSE;
    };
  }
}
