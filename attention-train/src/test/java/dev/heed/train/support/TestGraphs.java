package dev.heed.train.support;

import dev.heed.graph.CsrGraph;
import java.util.Random;

/** Small random graphs for tests. */
public final class TestGraphs {

  private TestGraphs() {}

  /**
   * A random directed CSR graph on n nodes: each pair kept with probability {@code p}, plus
   * self-loops on every node except {@code isolated} (pass -1 for none), which gets no entries.
   */
  public static CsrGraph random(int n, double p, int isolated, Random random) {
    int[] offsets = new int[n + 1];
    int[] cols = new int[n * n];
    int e = 0;
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < n; j++) {
        if (i != isolated && (i == j || random.nextDouble() < p)) {
          cols[e++] = j;
        }
      }
      offsets[i + 1] = e;
    }
    return CsrGraph.of(offsets, java.util.Arrays.copyOf(cols, e));
  }

  /** Uniform values in [-1, 1). */
  public static double[] uniform(int length, Random random) {
    double[] a = new double[length];
    for (int i = 0; i < length; i++) {
      a[i] = random.nextDouble() * 2 - 1;
    }
    return a;
  }
}
