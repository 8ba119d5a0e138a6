package dev.heed.live;

import java.util.Map;

/**
 * The softmax state a long row of a GAT layer with additive scores keeps between refreshes
 * (Veličković et al. 2018: e_ij = LeakyReLU(a_target·Wh_i + a_source·Wh_j), α = softmax over the
 * row): per head h, a shift m_h, S_h = Σ_j exp(e_ij − m_h) and W_h = Σ_j exp(e_ij − m_h)·Wh_j, in
 * float64, so that the head's output is W_h / S_h. Arrays laid out per head at h·(2 + headWidth):
 * m, S, W[headWidth]; the last value counts the updates in place since the sums were built.
 *
 * <p>Reads node projections as {@link IncrementalScorer} keeps them: per node, heads × headWidth
 * projected features, then each head's source term, then each head's target term. Thread safety:
 * immutable (the layer's shape); the arrays passed in belong to the caller.
 */
final class KeptSums {

  /** A row's sums are rebuilt after this many updates in place, bounding rounding drift. */
  static final int MAX_UPDATES = 1 << 16;

  /**
   * Sums are rebuilt instead of updated when an update shrinks a head's sum by more than this
   * factor (the subtraction would cancel that many of float64's bits).
   */
  static final double MAX_SHRINK = 1024;

  final int heads;
  final int headWidth;
  private final int width;
  private final int stride;
  private final double slope;

  /**
   * Describes one layer's shape.
   *
   * @param heads attention heads
   * @param projectionWidth values per node projection: heads · (headWidth + 2)
   * @param slope the LeakyReLU negative slope
   */
  KeptSums(int heads, int projectionWidth, float slope) {
    this.heads = heads;
    this.headWidth = (projectionWidth - 2 * heads) / heads;
    this.width = projectionWidth;
    this.stride = 2 + headWidth;
    this.slope = slope;
  }

  /** Values per row's sums array. */
  int length() {
    return heads * stride + 1;
  }

  /** The score of a source with the given term for a target with the given term, in float64. */
  private double score(float targetTerm, float sourceTerm) {
    double x = (double) targetTerm + sourceTerm;
    return x > 0 ? x : slope * x;
  }

  /**
   * Builds target {@code t}'s sums over its {@code d} sources from the projections in {@code
   * table}. O(d · heads · headWidth).
   */
  double[] build(float[] table, int t, int[] sources, int d) {
    int hd = heads * headWidth;
    int query = t * width + hd + heads;
    double[] sums = new double[length()];
    for (int h = 0; h < heads; h++) {
      sums[h * stride] = Double.NEGATIVE_INFINITY;
    }
    for (int j = 0; j < d; j++) {
      int key = sources[j] * width + hd;
      for (int h = 0; h < heads; h++) {
        double e = score(table[query + h], table[key + h]);
        if (e > sums[h * stride]) {
          sums[h * stride] = e;
        }
      }
    }
    for (int j = 0; j < d; j++) {
      int value = sources[j] * width;
      for (int h = 0; h < heads; h++) {
        int at = h * stride;
        double p = Math.exp(score(table[query + h], table[value + hd + h]) - sums[at]);
        sums[at + 1] += p;
        int v = value + h * headWidth;
        for (int c = 0; c < headWidth; c++) {
          sums[at + 2 + c] += p * table[v + c];
        }
      }
    }
    return sums;
  }

  /**
   * Updates target {@code t}'s sums in place for those of its {@code d} sources whose bit is set in
   * {@code replacedBits}: subtracts each one's term with its old projection ({@code replaced}) and
   * adds its term with the projection now in {@code table}, raising the shift when a new score
   * exceeds it. O(changed · heads · headWidth) plus the scan of the sources. Returns false when the
   * sums must be rebuilt instead (they are then partly updated): a head's sum shrank by more than
   * {@link #MAX_SHRINK}, or {@link #MAX_UPDATES} updates were made in place.
   */
  boolean update(
      float[] table,
      int t,
      int[] sources,
      int d,
      long[] replacedBits,
      Map<Integer, float[]> replaced,
      double[] sums) {
    int hd = heads * headWidth;
    int query = t * width + hd + heads;
    int last = sums.length - 1;
    for (int j = 0; j < d; j++) {
      int u = sources[j];
      if ((replacedBits[u >>> 6] & (1L << u)) == 0) {
        continue;
      }
      if (++sums[last] > MAX_UPDATES) {
        return false;
      }
      float[] old = replaced.get(u);
      int now = u * width;
      for (int h = 0; h < heads; h++) {
        int at = h * stride;
        double oldScore = score(table[query + h], old[hd + h]);
        double newScore = score(table[query + h], table[now + hd + h]);
        if (newScore > sums[at]) {
          double factor = Math.exp(sums[at] - newScore);
          for (int c = 1; c < stride; c++) {
            sums[at + c] *= factor;
          }
          sums[at] = newScore;
        }
        double oldWeight = Math.exp(oldScore - sums[at]);
        double newWeight = Math.exp(newScore - sums[at]);
        double before = sums[at + 1];
        double after = before - oldWeight + newWeight;
        if (!(after * MAX_SHRINK > before)) {
          return false;
        }
        sums[at + 1] = after;
        for (int c = 0; c < headWidth; c++) {
          sums[at + 2 + c] +=
              newWeight * table[now + h * headWidth + c] - oldWeight * old[h * headWidth + c];
        }
      }
    }
    return true;
  }

  /** Writes each head's output W / S (heads × headWidth floats) into {@code into} at {@code at}. */
  void output(double[] sums, float[] into, int at) {
    for (int h = 0; h < heads; h++) {
      double inverse = 1.0 / sums[h * stride + 1];
      for (int c = 0; c < headWidth; c++) {
        into[at + h * headWidth + c] = (float) (sums[h * stride + 2 + c] * inverse);
      }
    }
  }
}
