package dev.heed.graph;

import java.util.Objects;

/**
 * Summary figures of a graph that help choose a compute path (dense versus sparse, common
 * practice): size, density and the spread of row lengths (in-degrees, self-loops included).
 *
 * <p>Thread safety: immutable.
 *
 * @param nodeCount n
 * @param edgeCount E, the number of entries
 * @param density E / n², 0 for an empty graph
 * @param minDegree the shortest row, 0 for an empty graph
 * @param medianDegree the median row length (mean of the two middle ones for even n), 0 for an
 *     empty graph
 * @param meanDegree E / n, 0 for an empty graph
 * @param maxDegree the longest row, 0 for an empty graph
 * @param selfLoopCount the number of nodes that attend to themselves
 */
public record GraphStatistics(
    int nodeCount,
    long edgeCount,
    double density,
    int minDegree,
    double medianDegree,
    double meanDegree,
    int maxDegree,
    int selfLoopCount) {

  /**
   * Computes the statistics of {@code graph}. O(n + max degree) time with a degree histogram (no
   * sort); O(n · log d) more to count self-loops by binary search.
   *
   * @param graph input, not modified
   * @return the statistics
   * @throws NullPointerException if {@code graph} is null
   */
  public static GraphStatistics of(CsrGraph graph) {
    Objects.requireNonNull(graph, "graph");
    int n = graph.nodeCount();
    if (n == 0) {
      return new GraphStatistics(0, 0, 0.0, 0, 0.0, 0.0, 0, 0);
    }
    int min = Integer.MAX_VALUE;
    int max = 0;
    int selfLoops = 0;
    for (int i = 0; i < n; i++) {
      int d = graph.rowEnd(i) - graph.rowStart(i);
      min = Math.min(min, d);
      max = Math.max(max, d);
      if (d > 0 && graph.entryOf(i, i) >= 0) {
        selfLoops++;
      }
    }
    int[] histogram = new int[max - min + 1];
    for (int i = 0; i < n; i++) {
      histogram[graph.rowEnd(i) - graph.rowStart(i) - min]++;
    }
    // The k-th smallest row length, for k = (n-1)/2 and n/2 (0-based).
    int lowRank = (n - 1) / 2;
    int highRank = n / 2;
    int low = -1;
    int high = -1;
    int seen = 0;
    for (int d = 0; d < histogram.length && high < 0; d++) {
      seen += histogram[d];
      if (low < 0 && seen > lowRank) {
        low = d + min;
      }
      if (seen > highRank) {
        high = d + min;
      }
    }
    long e = graph.entryCount();
    return new GraphStatistics(
        n, e, graph.density(), min, (low + high) / 2.0, e / (double) n, max, selfLoops);
  }
}
