package dev.heed.train.layer;

import java.util.Objects;

/**
 * Softmax cross-entropy averaged over a set of labelled nodes (the loss of semi-supervised node
 * classification; Veličković et al. 2018 §3.3 train GAT with it): for each node i in the set,
 * {@code −log softmax(logits_i)[label_i]}, divided by the set's size. Nodes outside the set add
 * nothing and get a zero gradient. The gradient for node i is {@code (softmax(logits_i) −
 * onehot(label_i)) / |set|} (common practice).
 *
 * <p>Class weights (optional, for imbalanced classes; common practice): node i counts with weight
 * {@code w[label_i]}, the loss is {@code Σ_i w[label_i] · ℓ_i / Σ_i w[label_i]} and its gradient
 * scales the same way; {@link Result#weightedAccuracy()} is the same weighted mean of "correct".
 * With inverse-frequency weights ({@code w_c ∝ 1 / count_c}) the weighted accuracy is the balanced
 * accuracy, the mean of the per-class recalls. Without weights every node counts 1.
 *
 * <p>Cost: O(n·classes). Thread safety: stateless.
 */
public final class MaskedSoftmaxCrossEntropy {

  private MaskedSoftmaxCrossEntropy() {}

  /**
   * The loss over a node set, how many of the set the argmax gets right, and the gradient.
   *
   * @param loss mean cross-entropy over the set (0 for an empty set)
   * @param correct number of nodes in the set whose highest logit is their label (ties go to the
   *     lower class)
   * @param count size of the set
   * @param gradient dLoss/dLogits, {@code n * classes}, or null when not requested
   * @param weightedAccuracy the class-weighted share of correct nodes (the plain accuracy without
   *     weights; NaN for an empty set)
   */
  public record Result(
      double loss, int correct, int count, double[] gradient, double weightedAccuracy) {

    /**
     * A result without class weights: the weighted accuracy is the plain accuracy.
     *
     * @param loss see the record description
     * @param correct see the record description
     * @param count see the record description
     * @param gradient see the record description
     */
    public Result(double loss, int correct, int count, double[] gradient) {
      this(loss, correct, count, gradient, count == 0 ? Double.NaN : (double) correct / count);
    }

    /**
     * Returns the accuracy, {@code correct / count}, or NaN for an empty set.
     *
     * @return the accuracy in [0, 1]
     */
    public double accuracy() {
      return count == 0 ? Double.NaN : (double) correct / count;
    }
  }

  /**
   * Evaluates the loss.
   *
   * @param logits input, not modified: {@code n * classes} scores, node-major
   * @param classes number of classes, at least 1
   * @param labels input, not modified: a class in {@code 0..classes-1} for each node of the set
   *     (others are not read)
   * @param nodes input, not modified: the node set, each in {@code 0..n-1}
   * @param withGradient whether to compute the gradient
   * @return the result
   * @throws IllegalArgumentException if a length, node or label is out of range
   */
  public static Result evaluate(
      double[] logits, int classes, int[] labels, int[] nodes, boolean withGradient) {
    return evaluate(logits, classes, labels, nodes, withGradient, null);
  }

  /**
   * Evaluates the class-weighted loss (see the class description).
   *
   * @param logits input, not modified: {@code n * classes} scores, node-major
   * @param classes number of classes, at least 1
   * @param labels input, not modified: a class in {@code 0..classes-1} for each node of the set
   * @param nodes input, not modified: the node set, each in {@code 0..n-1}
   * @param withGradient whether to compute the gradient
   * @param classWeights input, not modified: {@code classes} positive finite weights, or null for
   *     all 1
   * @return the result
   * @throws IllegalArgumentException if a length, node, label or weight is out of range
   */
  public static Result evaluate(
      double[] logits,
      int classes,
      int[] labels,
      int[] nodes,
      boolean withGradient,
      double[] classWeights) {
    Objects.requireNonNull(logits, "logits");
    Objects.requireNonNull(labels, "labels");
    Objects.requireNonNull(nodes, "nodes");
    if (classes < 1 || logits.length % classes != 0) {
      throw new IllegalArgumentException(
          "logits length " + logits.length + " is not a multiple of classes = " + classes);
    }
    int n = logits.length / classes;
    if (classWeights != null) {
      if (classWeights.length != classes) {
        throw new IllegalArgumentException(
            "classWeights must have one weight per class ("
                + classes
                + "), got "
                + classWeights.length);
      }
      for (int c = 0; c < classes; c++) {
        if (!(classWeights[c] > 0) || !Double.isFinite(classWeights[c])) {
          throw new IllegalArgumentException(
              "class weight "
                  + c
                  + " is "
                  + classWeights[c]
                  + "; weights must be positive, finite");
        }
      }
    }
    double[] gradient = withGradient ? new double[logits.length] : null;
    double total = 0;
    int correct = 0;
    double weightedCorrect = 0;
    double weightSum = 0;
    for (int node : nodes) {
      weightSum +=
          classWeights == null || !validLabel(node, n, labels, classes)
              ? 1.0
              : classWeights[labels[node]];
    }
    double inv = nodes.length == 0 ? 0 : 1.0 / weightSum;
    double[] p = new double[classes];
    for (int node : nodes) {
      if (node < 0 || node >= n) {
        throw new IllegalArgumentException("node " + node + " out of range 0.." + (n - 1));
      }
      if (node >= labels.length || labels[node] < 0 || labels[node] >= classes) {
        throw new IllegalArgumentException(
            "node "
                + node
                + " has label "
                + (node < labels.length ? labels[node] : "(missing)")
                + ", expected 0.."
                + (classes - 1));
      }
      int at = node * classes;
      double max = Double.NEGATIVE_INFINITY;
      int best = 0;
      for (int c = 0; c < classes; c++) {
        if (logits[at + c] > max) {
          max = logits[at + c];
          best = c;
        }
      }
      double sum = 0;
      for (int c = 0; c < classes; c++) {
        p[c] = StrictMath.exp(logits[at + c] - max);
        sum += p[c];
      }
      int label = labels[node];
      double w = classWeights == null ? 1.0 : classWeights[label];
      total += w * -(logits[at + label] - max - StrictMath.log(sum));
      if (best == label) {
        correct++;
        weightedCorrect += w;
      }
      if (gradient != null) {
        double scale = w * inv;
        for (int c = 0; c < classes; c++) {
          gradient[at + c] += (p[c] / sum - (c == label ? 1.0 : 0.0)) * scale;
        }
      }
    }
    return new Result(
        total * inv,
        correct,
        nodes.length,
        gradient,
        nodes.length == 0 ? Double.NaN : weightedCorrect / weightSum);
  }

  private static boolean validLabel(int node, int n, int[] labels, int classes) {
    return node >= 0
        && node < n
        && node < labels.length
        && labels[node] >= 0
        && labels[node] < classes;
  }
}
