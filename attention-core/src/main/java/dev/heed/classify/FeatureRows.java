package dev.heed.classify;

/**
 * Read access to node features one row at a time: what scoring a few nodes needs, without an n × f
 * matrix. {@link NodeFeatures} implements it, and so can a feature store that changes over time, as
 * long as one instance keeps answering for one fixed version of the features. Every value must be
 * finite.
 *
 * <p>Thread safety: implementations state theirs; those in Heed are immutable.
 */
public interface FeatureRows {

  /**
   * Returns the number of nodes; ids run over {@code 0..n-1}.
   *
   * @return n, at least 0
   */
  int nodeCount();

  /**
   * Returns the number of features per node.
   *
   * @return f, at least 1
   */
  int featureCount();

  /**
   * Copies one node's features into {@code into}, starting at {@code offset}.
   *
   * @param node a node id in {@code 0..n-1}
   * @param into output: receives {@link #featureCount()} values
   * @param offset where the first value goes
   * @throws IndexOutOfBoundsException if {@code node} is out of range or {@code into} is too short
   */
  void copyRow(int node, float[] into, int offset);
}
