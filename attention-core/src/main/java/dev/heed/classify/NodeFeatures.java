package dev.heed.classify;

import dev.heed.attention.MemoryBudget;
import dev.heed.graph.NodeIndex;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.nio.file.Path;
import java.util.Arrays;
import java.util.List;
import java.util.Objects;

/**
 * An immutable n × f matrix of node features (row i = node i), float32, every value finite. Created
 * from {@code float[][]}, row-major values, or a {@code .npy} file read with Heed's safe reader
 * (from an ND4J array: {@code dev.heed.attention.dense.Nd4jFeatures} in {@code attention-dense}).
 * All factories copy their input. Rows are matched to nodes by position; rows that come with their
 * node ids are put in a graph's node order by {@link #byId(NodeIndex, List, NodeFeatures)} or
 * {@link FeatureTable}.
 *
 * <p>Memory: 4·n·f bytes. Thread safety: immutable.
 */
public final class NodeFeatures implements FeatureRows {

  private final int nodeCount;
  private final int featureCount;
  private final float[] values;

  private NodeFeatures(int nodeCount, int featureCount, float[] values) {
    this.nodeCount = nodeCount;
    this.featureCount = featureCount;
    this.values = values;
  }

  /**
   * Copies features from rows.
   *
   * @param rows input, not modified: one row per node, all of the same length (at least 1)
   * @return the features
   * @throws dev.heed.attention.MemoryBudgetExceededException if the matrix would not fit the heap
   *     budget ({@link dev.heed.attention.MemoryBudget})
   * @throws IllegalArgumentException if rows are ragged or empty, or a value is NaN or infinite
   *     (the message names the node and feature)
   */
  public static NodeFeatures of(float[][] rows) {
    Objects.requireNonNull(rows, "rows");
    int f = rows.length == 0 ? 0 : Objects.requireNonNull(rows[0], "rows[0]").length;
    if (f < 1) {
      throw new IllegalArgumentException(
          "need at least one node and one feature, got " + rows.length + " rows of length " + f);
    }
    MemoryBudget.check("node features (" + rows.length + " × " + f + ")", 4L * rows.length * f);
    float[] values = new float[Math.multiplyExact(rows.length, f)];
    for (int i = 0; i < rows.length; i++) {
      float[] row = rows[i];
      if (row == null || row.length != f) {
        throw new IllegalArgumentException(
            "rows must all have the same length: row 0 has "
                + f
                + ", row "
                + i
                + (row == null ? " is null" : " has " + row.length));
      }
      System.arraycopy(row, 0, values, i * f, f);
    }
    checkFinite(values, f);
    return new NodeFeatures(rows.length, f, values);
  }

  /**
   * Copies features from row-major values.
   *
   * @param values input, not modified: node i's features at {@code i * featureCount}
   * @param nodeCount n, at least 0
   * @param featureCount f, at least 1
   * @return the features
   * @throws IllegalArgumentException if the length is not n·f or a value is NaN or infinite
   */
  public static NodeFeatures ofRowMajor(float[] values, int nodeCount, int featureCount) {
    Objects.requireNonNull(values, "values");
    if (nodeCount < 0 || featureCount < 1) {
      throw new IllegalArgumentException(
          "need nodeCount >= 0 and featureCount >= 1, got " + nodeCount + " and " + featureCount);
    }
    if (values.length != (long) nodeCount * featureCount) {
      throw new IllegalArgumentException(
          "values must have length nodeCount * featureCount = "
              + nodeCount
              + " * "
              + featureCount
              + ", got "
              + values.length);
    }
    float[] copy = values.clone();
    checkFinite(copy, featureCount);
    return new NodeFeatures(nodeCount, featureCount, copy);
  }

  /**
   * Reads features from a {@code .npy} file (shape [n, f], float32 or float64, C order) with Heed's
   * safe reader and the default limits; float64 values are rounded to float32.
   *
   * @param file the file
   * @return the features
   * @throws dev.heed.npy.NpyFormatException if the file is malformed, of another type or rank, or
   *     over a limit
   * @throws IOException if the file cannot be read
   * @throws IllegalArgumentException if a value is NaN or infinite
   */
  public static NodeFeatures readNpy(Path file) throws IOException {
    return readNpy(file, NpyLimits.defaults());
  }

  /**
   * Reads features from a {@code .npy} file with the given limits; see {@link #readNpy(Path)}.
   *
   * @param file the file
   * @param limits size limits
   * @return the features
   * @throws dev.heed.npy.NpyFormatException if the file is malformed or not accepted
   * @throws IOException if the file cannot be read
   */
  public static NodeFeatures readNpy(Path file, NpyLimits limits) throws IOException {
    return fromArray(Npy.read(file, limits), file.toString());
  }

  /**
   * Features from a 2-D float array read by Heed's reader; {@code name} names it in errors.
   *
   * @throws dev.heed.npy.NpyFormatException if the array is not 2-D float with a column
   */
  static NodeFeatures fromArray(NpyArray array, String name)
      throws dev.heed.npy.NpyFormatException {
    if (array.rank() != 2 || !array.dataType().isFloatingPoint() || array.dimension(1) < 1) {
      throw new dev.heed.npy.NpyFormatException(
          name,
          "features must be a 2-D float32 or float64 array [nodes, features], got "
              + array.dataType().descriptor()
              + " of shape "
              + Arrays.toString(array.shape()));
    }
    return ofRowMajor(array.toFloats(), array.dimension(0), array.dimension(1));
  }

  /**
   * Puts rows that come with node ids into a graph's node order: row i of the result is the row
   * whose id is {@code nodes.idOf(i)}, so the rows may come in any order. The same as {@code
   * FeatureTable.of(ids, rows).alignTo(nodes)}; see {@link FeatureTable} for reading such rows from
   * files. O(n·f).
   *
   * @param nodes the graph's node index (for example {@code EdgeListResult.nodes()} or {@code
   *     IndexedGraph.nodes()})
   * @param ids input, not modified: the id of each row of {@code rows}, in row order
   * @param rows the rows, one per id, not modified
   * @param <K> the id type
   * @return the features in node order
   * @throws IllegalArgumentException naming how many and which ids (up to five) when nodes have no
   *     row, rows have no node, an id has two rows, or the counts of ids and rows differ
   */
  public static <K> NodeFeatures byId(
      NodeIndex<K> nodes, List<? extends K> ids, NodeFeatures rows) {
    return FeatureTable.<K>of(ids, rows).alignTo(nodes);
  }

  /** Wraps values this package just made; no copy, no check. */
  static NodeFeatures adopt(float[] values, int nodeCount, int featureCount) {
    return new NodeFeatures(nodeCount, featureCount, values);
  }

  /**
   * Returns the number of nodes (rows).
   *
   * @return n
   */
  public int nodeCount() {
    return nodeCount;
  }

  /**
   * Returns the number of features per node (columns).
   *
   * @return f
   */
  public int featureCount() {
    return featureCount;
  }

  /**
   * Returns one value.
   *
   * @param node in {@code 0..n-1}
   * @param feature in {@code 0..f-1}
   * @return the value
   */
  public float value(int node, int feature) {
    Objects.checkIndex(node, nodeCount);
    Objects.checkIndex(feature, featureCount);
    return values[node * featureCount + feature];
  }

  @Override
  public void copyRow(int node, float[] into, int offset) {
    Objects.checkIndex(node, nodeCount);
    Objects.checkFromIndexSize(offset, featureCount, into.length);
    System.arraycopy(values, node * featureCount, into, offset, featureCount);
  }

  /** The values without copying; callers in this package never modify them. */
  float[] shared() {
    return values;
  }

  private static void checkFinite(float[] values, int f) {
    for (int i = 0; i < values.length; i++) {
      if (!Float.isFinite(values[i])) {
        throw new IllegalArgumentException(
            "feature "
                + i % f
                + " of node "
                + i / f
                + " is "
                + values[i]
                + "; features must be finite");
      }
    }
  }
}
