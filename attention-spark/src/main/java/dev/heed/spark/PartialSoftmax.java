package dev.heed.spark;

/**
 * The softmax-weighted sum of part of one target's row, per head, as a state that merges exactly
 * with the state of another part: the running maximum m, the sum of exponentials s = Σ exp(e_j − m)
 * and the weighted sum a = Σ exp(e_j − m)·v_j (the online normaliser of Milakov and Gimelshein,
 * "Online normalizer calculation for softmax", 2018, extended to the weighted sum). Two states
 * merge as m = max(m1, m2), s = s1·exp(m1 − m) + s2·exp(m2 − m), likewise for a; the row's
 * attention output is a / s. Held in float64, so the merge order changes only the last bits.
 *
 * <p>Not thread-safe: one state per row part.
 */
final class PartialSoftmax {

  private final int heads;
  private final int width;
  private final double[] state; // per head: m, s, then width sums

  PartialSoftmax(int heads, int width) {
    this.heads = heads;
    this.width = width;
    this.state = new double[heads * (2 + width)];
    for (int h = 0; h < heads; h++) {
      state[h * (2 + width)] = Double.NEGATIVE_INFINITY;
    }
  }

  private PartialSoftmax(int heads, int width, double[] state) {
    this.heads = heads;
    this.width = width;
    this.state = state;
  }

  /** Folds one entry of head {@code h} in: its score and its value row at {@code value[off..]}. */
  void add(int h, double score, float[] value, int off) {
    int base = h * (2 + width);
    double m = state[base];
    double p;
    if (score > m) {
      double c = Math.exp(m - score); // 0 for the first entry (m = −∞)
      scale(base, c);
      state[base] = score;
      p = 1;
    } else {
      p = Math.exp(score - m);
    }
    state[base + 1] += p;
    for (int k = 0; k < width; k++) {
      state[base + 2 + k] += p * value[off + k];
    }
  }

  /** Merges another part of the same row into this one. */
  void merge(PartialSoftmax other) {
    assert other.heads == heads && other.width == width;
    for (int h = 0; h < heads; h++) {
      int base = h * (2 + width);
      double mo = other.state[base];
      if (other.state[base + 1] == 0) {
        continue; // an empty part
      }
      double m = state[base];
      if (mo > m) {
        scale(base, Math.exp(m - mo));
        state[base] = mo;
        m = mo;
      }
      double c = Math.exp(mo - m);
      state[base + 1] += c * other.state[base + 1];
      for (int k = 0; k < width; k++) {
        state[base + 2 + k] += c * other.state[base + 2 + k];
      }
    }
  }

  private void scale(int base, double c) {
    state[base + 1] *= c;
    for (int k = 0; k < width; k++) {
      state[base + 2 + k] *= c;
    }
  }

  /**
   * Writes a / s per head (heads × width floats, zeros for a head without entries) at {@code off}.
   */
  void result(float[] out, int off) {
    for (int h = 0; h < heads; h++) {
      int base = h * (2 + width);
      double s = state[base + 1];
      for (int k = 0; k < width; k++) {
        out[off + h * width + k] = s == 0 ? 0f : (float) (state[base + 2 + k] / s);
      }
    }
  }

  /**
   * Returns the attention weight α of an entry of head {@code h} with this score, once every part
   * of the row has been merged in: exp(score − m) / s.
   */
  double weight(int h, double score) {
    int base = h * (2 + width);
    return Math.exp(score - state[base]) / state[base + 1];
  }

  byte[] toBytes() {
    return FloatBytes.ofDoubles(state);
  }

  static PartialSoftmax fromBytes(int heads, int width, byte[] bytes) {
    double[] s = FloatBytes.doubles(bytes);
    if (s.length != heads * (2 + width)) {
      throw new IllegalStateException(
          "a partial row state holds " + s.length + " values, expected " + heads * (2 + width));
    }
    return new PartialSoftmax(heads, width, s);
  }
}
