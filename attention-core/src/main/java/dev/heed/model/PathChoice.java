package dev.heed.model;

import dev.heed.attention.ComputePath;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import java.util.Objects;

/**
 * Which attention kernel a model call uses, per attention layer.
 *
 * <p>{@link #AUTO} applies a fixed rule to the pattern the layer attends over and its score
 * function, until a calibrated choice replaces it: the complete pattern goes to {@link
 * ComputePath#DENSE}; a CSR pattern goes to DENSE when its density (E / n²) is at least {@value
 * #AUTO_DENSE_MIN_DENSITY_DOT} for scaled dot-product scores, or when it has at most {@value
 * #AUTO_DENSE_MAX_NODES} nodes and density at least {@value #AUTO_DENSE_MIN_DENSITY} for additive
 * (GAT) and GATv2 scores; everything else goes to {@link ComputePath#SPARSE}. The thresholds follow
 * the crossover sweep recorded in {@code benchmarks/RESULTS.md} (2-core reference machine, 4 heads
 * × 16 dims): the sparse path was faster below about 10–20 % density for dot-product scores (the
 * dense path's two matrix products are cheap there) and below about 58–75 % for additive scores,
 * whose sparse scores cost one add per head; GATv2, whose dense scores are Java loops over all n²
 * pairs, was not swept and follows the additive rule. Measure your own hardware with {@code heed
 * bench crossover}. If the kernel AUTO picked is not on the class path, AUTO uses the other one and
 * logs a warning; an explicit {@link #DENSE} or {@link #SPARSE} fails instead.
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

  /**
   * Largest node count AUTO sends to the dense path for additive and GATv2 scores unless the
   * pattern is complete.
   */
  public static final int AUTO_DENSE_MAX_NODES = 4096;

  /** Smallest density AUTO sends to the dense path for additive and GATv2 scores. */
  public static final double AUTO_DENSE_MIN_DENSITY = 0.75;

  /** Smallest density AUTO sends to the dense path for scaled dot-product scores. */
  public static final double AUTO_DENSE_MIN_DENSITY_DOT = 0.15;

  /**
   * Returns the path this choice takes for a layer (for AUTO, before any fallback).
   *
   * @param pattern the pattern an attention layer attends over
   * @param score the layer's score function
   * @return the path
   * @throws NullPointerException if an argument is null
   */
  public ComputePath pathFor(AttentionPattern pattern, ScoreFunction score) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(score, "score");
    return switch (this) {
      case DENSE -> ComputePath.DENSE;
      case SPARSE -> ComputePath.SPARSE;
      case AUTO -> autoDense(pattern, score) ? ComputePath.DENSE : ComputePath.SPARSE;
    };
  }

  private static boolean autoDense(AttentionPattern pattern, ScoreFunction score) {
    if (pattern instanceof CompletePattern) {
      return true;
    }
    if (score instanceof ScoreFunction.ScaledDotProduct) {
      return pattern.density() >= AUTO_DENSE_MIN_DENSITY_DOT;
    }
    return pattern.nodeCount() <= AUTO_DENSE_MAX_NODES
        && pattern.density() >= AUTO_DENSE_MIN_DENSITY;
  }
}
