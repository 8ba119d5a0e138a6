package dev.heed.graph;

import java.util.Arrays;
import java.util.Objects;
import java.util.Optional;

/**
 * An immutable directed graph in compressed sparse row form (Saad, <i>Iterative Methods for Sparse
 * Linear Systems</i>, 2nd ed., SIAM 2003, §3.4). Rows are targets and columns are sources: the
 * entries of row {@code i}, {@code column(rowStart(i)) .. column(rowEnd(i) - 1)}, are the nodes
 * {@code j} with an edge {@code j -> i}, the nodes that {@code i} attends to.
 *
 * <p>Invariants, checked on construction: {@code rowOffsets.length == n + 1}, {@code rowOffsets[0]
 * == 0}, offsets non-decreasing and ending at E, every column in {@code 0..n-1}, columns strictly
 * increasing within each row (sorted, no duplicates). Storage is the two int arrays, {@code 4·(n+1)
 * + 4·E} bytes beyond object headers; a graph made by this package's builders may keep a short
 * unused tail after its E columns (see {@link #storageBytes()}), which no method exposes.
 *
 * <p>Thread safety: immutable; safe to share between threads.
 */
public final class CsrGraph implements AttentionPattern, NeighbourRows {

  private final int[] rowOffsets;
  private final int[] columns; // entries 0..edgeCount-1 are the graph; any tail is unused
  private final int edgeCount;
  private final NodeLayout layout; // null: none

  private CsrGraph(int[] rowOffsets, int[] columns) {
    this(rowOffsets, columns, null);
  }

  private CsrGraph(int[] rowOffsets, int[] columns, NodeLayout layout) {
    this.rowOffsets = rowOffsets;
    this.columns = columns;
    this.edgeCount = rowOffsets[rowOffsets.length - 1];
    this.layout = layout;
  }

  /**
   * Returns this graph with a {@link NodeLayout} computed by {@code method}: the same rows and node
   * ids (the result {@linkplain #equals equals} this graph), plus a renumbering in which rows read
   * together sit together. {@code NodeClassifier} classifies every node of such a graph in layout
   * order (features, projections and layer outputs all in that order, predictions returned at the
   * caller's ids), so that the sparse kernel's random reads of node rows land closer together; the
   * results agree with the graph's own order to float rounding (each row's sources are summed in
   * another order). Kernels called directly see the graph as it is. Compute it once and keep the
   * graph: the cost is the order's ({@link LocalityOrder}), and the layout holds {@code 4·(3n + 1)
   * + 4·E} bytes.
   *
   * <pre>{@code
   * CsrGraph graph = CsrGraphBuilder.fromEdges(src, dst, n).build()
   *     .withLocalityOrder(LocalityOrder.DEGREE);
   * }</pre>
   *
   * @param method the order
   * @return a new graph sharing this one's rows, with the layout
   * @throws NullPointerException if {@code method} is null
   */
  public CsrGraph withLocalityOrder(LocalityOrder method) {
    return new CsrGraph(rowOffsets, columns, NodeLayout.of(this, method));
  }

  /**
   * Returns the node layout made by {@link #withLocalityOrder}, if any.
   *
   * @return the layout, or empty for a graph without one
   */
  public Optional<NodeLayout> nodeLayout() {
    return Optional.ofNullable(layout);
  }

  /**
   * Creates a graph from CSR arrays, after validating them. The arrays are copied; the caller's
   * arrays are not modified or retained.
   *
   * @param rowOffsets input, length {@code n + 1}: row {@code i} occupies entries {@code
   *     rowOffsets[i] .. rowOffsets[i+1]-1}
   * @param columns input, length E: the source node of each entry, sorted within each row
   * @return the validated graph
   * @throws IllegalArgumentException naming the offending row, entry and value if an invariant
   *     fails
   * @throws NullPointerException if either array is null
   */
  public static CsrGraph of(int[] rowOffsets, int[] columns) {
    Objects.requireNonNull(rowOffsets, "rowOffsets");
    Objects.requireNonNull(columns, "columns");
    int[] offsets = rowOffsets.clone();
    int[] cols = columns.clone();
    validate(offsets, cols, false);
    return new CsrGraph(offsets, cols);
  }

  /**
   * Wraps arrays that the caller has just built and will never touch again, after validating them.
   * For builders in this package only: no copy is made. {@code columns} may be longer than E
   * ({@code rowOffsets[n]}); the tail is never read or exposed.
   */
  static CsrGraph adopt(int[] rowOffsets, int[] columns) {
    validate(rowOffsets, columns, true);
    return new CsrGraph(rowOffsets, columns);
  }

  private static void validate(int[] offsets, int[] cols, boolean allowTail) {
    if (offsets.length == 0) {
      throw new IllegalArgumentException(
          "rowOffsets must have length n + 1 >= 1, got length 0; for an empty graph pass {0}");
    }
    int n = offsets.length - 1;
    if (offsets[0] != 0) {
      throw new IllegalArgumentException("rowOffsets[0] must be 0, got " + offsets[0]);
    }
    if (allowTail ? offsets[n] < 0 || offsets[n] > cols.length : offsets[n] != cols.length) {
      throw new IllegalArgumentException(
          "rowOffsets[n] must equal the number of columns (E = "
              + cols.length
              + "), got rowOffsets["
              + n
              + "] = "
              + offsets[n]);
    }
    for (int row = 0; row < n; row++) {
      int start = offsets[row];
      int end = offsets[row + 1];
      if (end < start) {
        throw new IllegalArgumentException(
            "rowOffsets must be non-decreasing: row "
                + row
                + " starts at "
                + start
                + " but rowOffsets["
                + (row + 1)
                + "] = "
                + end);
      }
      int previous = -1;
      for (int e = start; e < end; e++) {
        int c = cols[e];
        if (c < 0 || c >= n) {
          throw new IllegalArgumentException(
              "column index out of range in row "
                  + row
                  + ": columns["
                  + e
                  + "] = "
                  + c
                  + ", expected 0.."
                  + (n - 1));
        }
        if (c <= previous) {
          throw new IllegalArgumentException(
              "columns must be strictly increasing within a row: row "
                  + row
                  + " has columns["
                  + (e - 1)
                  + "] = "
                  + previous
                  + " followed by columns["
                  + e
                  + "] = "
                  + c
                  + (c == previous ? " (duplicate edge)" : " (unsorted)"));
        }
        previous = c;
      }
    }
  }

  @Override
  public int nodeCount() {
    return rowOffsets.length - 1;
  }

  @Override
  public long entryCount() {
    return edgeCount;
  }

  /**
   * Returns the number of edges E (entries), as an int.
   *
   * @return the edge count
   */
  public int edgeCount() {
    return edgeCount;
  }

  /**
   * Returns the first entry of {@code row}.
   *
   * @param row a target node in {@code 0..n-1}
   * @return the index of the row's first entry
   */
  public int rowStart(int row) {
    return rowOffsets[row];
  }

  /**
   * Returns one past the last entry of {@code row}.
   *
   * @param row a target node in {@code 0..n-1}
   * @return the index after the row's last entry
   */
  public int rowEnd(int row) {
    return rowOffsets[row + 1];
  }

  /**
   * Returns the source node of an entry.
   *
   * @param entry an entry index in {@code 0..E-1}
   * @return the source node id
   */
  public int column(int entry) {
    return columns[entry];
  }

  @Override
  public int degree(int target) {
    Objects.checkIndex(target, nodeCount());
    return rowOffsets[target + 1] - rowOffsets[target];
  }

  @Override
  public boolean allows(int target, int source) {
    Objects.checkIndex(target, nodeCount());
    Objects.checkIndex(source, nodeCount());
    return Arrays.binarySearch(columns, rowOffsets[target], rowOffsets[target + 1], source) >= 0;
  }

  @Override
  public int copyRow(int target, int[] into, int offset) {
    Objects.checkIndex(target, nodeCount());
    int start = rowOffsets[target];
    int length = rowOffsets[target + 1] - start;
    Objects.checkFromIndexSize(offset, length, into.length);
    System.arraycopy(columns, start, into, offset, length);
    return length;
  }

  /**
   * Returns the entry index of the pair ({@code target}, {@code source}), or -1 if it is absent.
   *
   * @param target a node id in {@code 0..n-1}
   * @param source a node id in {@code 0..n-1}
   * @return the entry index, or -1
   */
  public int entryOf(int target, int source) {
    Objects.checkIndex(target, nodeCount());
    Objects.checkIndex(source, nodeCount());
    int at = Arrays.binarySearch(columns, rowOffsets[target], rowOffsets[target + 1], source);
    return at >= 0 ? at : -1;
  }

  /**
   * Returns a copy of the row offsets.
   *
   * @return a new array of length {@code n + 1}
   */
  public int[] rowOffsets() {
    return rowOffsets.clone();
  }

  /**
   * Returns a copy of the column indices.
   *
   * @return a new array of length E
   */
  public int[] columns() {
    return Arrays.copyOf(columns, edgeCount);
  }

  /**
   * Returns the bytes held by the two arrays: {@code 4·(n+1) + 4·E} of payload, plus any unused
   * column tail a builder left (at most E/8 entries, see {@link CsrGraphBuilder}), plus two 16-byte
   * array headers (common practice for a 64-bit JVM with compressed class pointers). For memory
   * accounting.
   *
   * @return the storage in bytes
   */
  public long storageBytes() {
    return 16L + 4L * rowOffsets.length + 16L + 4L * columns.length;
  }

  @Override
  public boolean equals(Object o) {
    return o instanceof CsrGraph other
        && Arrays.equals(rowOffsets, other.rowOffsets)
        && Arrays.equals(columns, 0, edgeCount, other.columns, 0, other.edgeCount);
  }

  @Override
  public int hashCode() {
    int h = 1;
    for (int e = 0; e < edgeCount; e++) {
      h = 31 * h + columns[e];
    }
    return 31 * Arrays.hashCode(rowOffsets) + h;
  }

  @Override
  public String toString() {
    return "CsrGraph[n=" + nodeCount() + ", E=" + edgeCount + "]";
  }
}
