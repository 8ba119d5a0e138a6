package dev.heed.train.attention;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;

/**
 * Row-by-row access to a pattern's entries in the order kernels number them: CSR entry order, or
 * row-major {@code i * n + j} for the complete pattern. Internal: callers have validated the
 * pattern.
 */
final class PatternRows {

  private final CsrGraph csr;
  private final int n;

  PatternRows(AttentionPattern pattern) {
    this.n = pattern.nodeCount();
    if (pattern instanceof CsrGraph g) {
      this.csr = g;
    } else {
      assert pattern instanceof CompletePattern;
      if ((long) n * n > Integer.MAX_VALUE) {
        throw new IllegalArgumentException(
            "the complete pattern on "
                + n
                + " nodes has "
                + (long) n * n
                + " entries, more than an int indexes; train on a sparse graph instead");
      }
      this.csr = null;
    }
  }

  int start(int row) {
    return csr != null ? csr.rowStart(row) : row * n;
  }

  int end(int row) {
    return csr != null ? csr.rowEnd(row) : row * n + n;
  }

  int source(int row, int entry) {
    return csr != null ? csr.column(entry) : entry - row * n;
  }
}
