package dev.heed.attention.dense;

import dev.heed.classify.NodeFeatures;
import java.util.Arrays;
import java.util.Objects;
import org.nd4j.linalg.api.ndarray.INDArray;

/**
 * Node features from ND4J arrays, for services that already hold their features in ND4J.
 *
 * <p>Thread safety: stateless.
 */
public final class Nd4jFeatures {

  private Nd4jFeatures() {}

  /**
   * Copies features from a rank-2 ND4J array (any data type, any ordering or view), rows = nodes.
   *
   * @param array input, not modified: shape [n, f]
   * @return the features, converted to float32
   * @throws IllegalArgumentException if the array is not rank 2, is empty or too large for one Java
   *     array, or holds a NaN or infinity (the message names the node and feature)
   */
  public static NodeFeatures of(INDArray array) {
    Objects.requireNonNull(array, "array");
    if (array.rank() != 2) {
      throw new IllegalArgumentException(
          "features must be a rank-2 array [nodes, features], got shape "
              + Arrays.toString(array.shape()));
    }
    long n = array.size(0);
    long f = array.size(1);
    if (n * f > Integer.MAX_VALUE - 8 || f < 1) {
      throw new IllegalArgumentException(
          "features of shape "
              + Arrays.toString(array.shape())
              + " are not supported: need at least one feature and at most "
              + (Integer.MAX_VALUE - 8)
              + " values; split the nodes into batches");
    }
    return NodeFeatures.of(array.toFloatMatrix());
  }
}
