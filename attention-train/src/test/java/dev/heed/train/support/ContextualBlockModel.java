package dev.heed.train.support;

import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.List;
import java.util.Random;
import java.util.TreeSet;

/**
 * A two-class contextual stochastic block model (Deshpande, Sen, Montanari, Mossel, "Contextual
 * Stochastic Block Models", NeurIPS 2018, §2): labels v_i = ±1 uniformly; an undirected edge
 * between i and j with probability c_in/n within a class and c_out/n across, where c_in = d + λ√d
 * and c_out = d − λ√d; features b_i = √(μ/n)·v_i·u + Z_i/√p with u ~ N(0, I_p/p) and Z_i ~ N(0,
 * I_p). The data it generates is our own. Labels here are 0 (v = −1) and 1 (v = +1); the CSR graph
 * has a self-loop on every node (GAT's N(i) includes i).
 */
public final class ContextualBlockModel {

  /** Generated data. */
  public record Sample(CsrGraph graph, float[] features, int[] labels, int featureWidth) {}

  private ContextualBlockModel() {}

  /**
   * Generates a sample from a seed (java.util.Random, whose algorithm is specified, so samples are
   * the same on every JDK).
   */
  public static Sample generate(
      int n, double averageDegree, double lambda, int p, double mu, long seed) {
    Random random = new Random(seed);
    int[] labels = new int[n];
    for (int i = 0; i < n; i++) {
      labels[i] = random.nextBoolean() ? 1 : 0;
    }
    double cIn = averageDegree + lambda * Math.sqrt(averageDegree);
    double cOut = averageDegree - lambda * Math.sqrt(averageDegree);
    if (cOut < 0) {
      throw new IllegalArgumentException("λ too large for this degree: c_out = " + cOut);
    }
    List<TreeSet<Integer>> rows = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      TreeSet<Integer> row = new TreeSet<>();
      row.add(i);
      rows.add(row);
    }
    for (int i = 0; i < n; i++) {
      for (int j = i + 1; j < n; j++) {
        double prob = (labels[i] == labels[j] ? cIn : cOut) / n;
        if (random.nextDouble() < prob) {
          rows.get(i).add(j);
          rows.get(j).add(i);
        }
      }
    }
    int[] offsets = new int[n + 1];
    List<Integer> cols = new ArrayList<>();
    for (int i = 0; i < n; i++) {
      cols.addAll(rows.get(i));
      offsets[i + 1] = cols.size();
    }
    CsrGraph graph = CsrGraph.of(offsets, cols.stream().mapToInt(Integer::intValue).toArray());
    double[] u = new double[p];
    for (int k = 0; k < p; k++) {
      u[k] = random.nextGaussian() / Math.sqrt(p);
    }
    float[] features = new float[n * p];
    double signal = Math.sqrt(mu / n);
    for (int i = 0; i < n; i++) {
      double v = labels[i] == 1 ? 1.0 : -1.0;
      for (int k = 0; k < p; k++) {
        features[i * p + k] = (float) (signal * v * u[k] + random.nextGaussian() / Math.sqrt(p));
      }
    }
    return new Sample(graph, features, labels, p);
  }
}
