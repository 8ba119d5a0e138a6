package dev.heed.train;

import dev.heed.graph.AttentionPattern;
import java.util.Objects;

/**
 * One graph with node features and labels, split into training and validation node sets, for
 * full-batch semi-supervised node classification.
 *
 * <p>Thread safety: immutable; holds private copies of its arrays.
 */
public final class TrainingData {

  private final AttentionPattern pattern;
  private final int featureWidth;
  private final double[] features;
  private final int classCount;
  private final int[] labels;
  private final int[] trainingNodes;
  private final int[] validationNodes;
  private final double[] classWeights;

  private TrainingData(
      AttentionPattern pattern,
      int featureWidth,
      double[] features,
      int classCount,
      int[] labels,
      int[] trainingNodes,
      int[] validationNodes,
      double[] classWeights) {
    this.pattern = pattern;
    this.featureWidth = featureWidth;
    this.features = features;
    this.classCount = classCount;
    this.labels = labels;
    this.trainingNodes = trainingNodes;
    this.validationNodes = validationNodes;
    this.classWeights = classWeights;
  }

  /**
   * Creates and validates training data. Arrays are copied.
   *
   * @param pattern the graph attention runs over (add self-loops for GAT, whose N(i) includes i)
   * @param featureWidth features per node, at least 1
   * @param features input: {@code n * featureWidth} finite values, node-major
   * @param classCount number of classes, at least 2
   * @param labels input: length n; a class in {@code 0..classCount-1}, or -1 for unknown
   * @param trainingNodes input: at least one node, each labelled, no repeats
   * @param validationNodes input: labelled nodes for early stopping, no repeats; may be empty
   * @return the data
   * @throws IllegalArgumentException naming the offending array, index and value
   */
  public static TrainingData of(
      AttentionPattern pattern,
      int featureWidth,
      float[] features,
      int classCount,
      int[] labels,
      int[] trainingNodes,
      int[] validationNodes) {
    Objects.requireNonNull(pattern, "pattern");
    Objects.requireNonNull(features, "features");
    Objects.requireNonNull(labels, "labels");
    Objects.requireNonNull(trainingNodes, "trainingNodes");
    Objects.requireNonNull(validationNodes, "validationNodes");
    int n = pattern.nodeCount();
    if (featureWidth < 1) {
      throw new IllegalArgumentException("featureWidth must be at least 1, got " + featureWidth);
    }
    if (classCount < 2) {
      throw new IllegalArgumentException("classCount must be at least 2, got " + classCount);
    }
    if (features.length != (long) n * featureWidth) {
      throw new IllegalArgumentException(
          "features must have length n * featureWidth = "
              + n
              + " * "
              + featureWidth
              + " = "
              + (long) n * featureWidth
              + ", got "
              + features.length);
    }
    double[] wide = new double[features.length];
    for (int i = 0; i < features.length; i++) {
      if (!Float.isFinite(features[i])) {
        throw new IllegalArgumentException(
            "features hold "
                + features[i]
                + " at index "
                + i
                + " (node "
                + i / featureWidth
                + ", feature "
                + i % featureWidth
                + "); features must be finite");
      }
      wide[i] = features[i];
    }
    if (labels.length != n) {
      throw new IllegalArgumentException(
          "labels must have one entry per node (" + n + "), got " + labels.length);
    }
    for (int i = 0; i < n; i++) {
      if (labels[i] < -1 || labels[i] >= classCount) {
        throw new IllegalArgumentException(
            "label of node "
                + i
                + " is "
                + labels[i]
                + "; expected 0.."
                + (classCount - 1)
                + " or -1 for unknown");
      }
    }
    if (trainingNodes.length == 0) {
      throw new IllegalArgumentException("at least one training node is needed");
    }
    boolean[] seen = new boolean[n];
    checkNodes("trainingNodes", trainingNodes, labels, seen);
    checkNodes("validationNodes", validationNodes, labels, seen);
    return new TrainingData(
        pattern,
        featureWidth,
        wide,
        classCount,
        labels.clone(),
        trainingNodes.clone(),
        validationNodes.clone(),
        null);
  }

  /**
   * Returns the same data with class weights on the loss: each labelled node counts with its
   * class's weight in the training loss, the validation loss and the validation accuracy that early
   * stopping watches (see {@link dev.heed.train.layer.MaskedSoftmaxCrossEntropy}). For imbalanced
   * classes (common practice).
   *
   * @param weights input, not modified: one positive finite weight per class, or null for none
   * @return the data with the weights
   * @throws IllegalArgumentException if the count or a weight is wrong
   */
  public TrainingData withClassWeights(double[] weights) {
    if (weights != null) {
      if (weights.length != classCount) {
        throw new IllegalArgumentException(
            "class weights must have one weight per class ("
                + classCount
                + "), got "
                + weights.length);
      }
      for (int c = 0; c < classCount; c++) {
        if (!(weights[c] > 0) || !Double.isFinite(weights[c])) {
          throw new IllegalArgumentException(
              "class weight " + c + " is " + weights[c] + "; weights must be positive and finite");
        }
      }
    }
    return new TrainingData(
        pattern,
        featureWidth,
        features,
        classCount,
        labels,
        trainingNodes,
        validationNodes,
        weights == null ? null : weights.clone());
  }

  /**
   * Returns the same data with inverse-frequency class weights from the training nodes: {@code w_c
   * = |training| / (classes · count_c)}, so every class weighs the same in total and the weighted
   * accuracy is the balanced accuracy (the mean per-class recall). A class with no training node
   * gets weight 1.
   *
   * @return the data with balanced weights
   */
  public TrainingData withBalancedClassWeights() {
    int[] counts = new int[classCount];
    for (int node : trainingNodes) {
      counts[labels[node]]++;
    }
    double[] weights = new double[classCount];
    for (int c = 0; c < classCount; c++) {
      weights[c] =
          counts[c] == 0 ? 1.0 : (double) trainingNodes.length / ((double) classCount * counts[c]);
    }
    return withClassWeights(weights);
  }

  /**
   * Returns the class weights.
   *
   * @return a copy, or null when every node counts 1
   */
  public double[] classWeights() {
    return classWeights == null ? null : classWeights.clone();
  }

  double[] classWeightsShared() {
    return classWeights;
  }

  private static void checkNodes(String name, int[] nodes, int[] labels, boolean[] seen) {
    for (int k = 0; k < nodes.length; k++) {
      int node = nodes[k];
      if (node < 0 || node >= labels.length) {
        throw new IllegalArgumentException(
            name + "[" + k + "] = " + node + " is out of range 0.." + (labels.length - 1));
      }
      if (labels[node] < 0) {
        throw new IllegalArgumentException(
            name + "[" + k + "] = node " + node + " has no label (-1); label it or leave it out");
      }
      if (seen[node]) {
        throw new IllegalArgumentException(
            name
                + "["
                + k
                + "] = node "
                + node
                + " appears twice (in this set or in both training and validation sets)");
      }
      seen[node] = true;
    }
  }

  /**
   * Returns the graph.
   *
   * @return the pattern
   */
  public AttentionPattern pattern() {
    return pattern;
  }

  /**
   * Returns the number of nodes.
   *
   * @return n
   */
  public int nodeCount() {
    return pattern.nodeCount();
  }

  /**
   * Returns the features per node.
   *
   * @return the width
   */
  public int featureWidth() {
    return featureWidth;
  }

  /**
   * Returns a copy of the features, widened to float64.
   *
   * @return {@code n * featureWidth} values
   */
  public double[] features() {
    return features.clone();
  }

  double[] featuresShared() {
    return features;
  }

  /**
   * Returns the number of classes.
   *
   * @return the class count
   */
  public int classCount() {
    return classCount;
  }

  /**
   * Returns a copy of the labels (-1 for unknown).
   *
   * @return n labels
   */
  public int[] labels() {
    return labels.clone();
  }

  int[] labelsShared() {
    return labels;
  }

  /**
   * Returns a copy of the training nodes.
   *
   * @return the nodes whose labels drive the loss
   */
  public int[] trainingNodes() {
    return trainingNodes.clone();
  }

  int[] trainingNodesShared() {
    return trainingNodes;
  }

  /**
   * Returns a copy of the validation nodes.
   *
   * @return the nodes early stopping watches (possibly none)
   */
  public int[] validationNodes() {
    return validationNodes.clone();
  }

  int[] validationNodesShared() {
    return validationNodes;
  }
}
