package dev.heed.train.layer;

import java.util.Objects;

/**
 * Softmax cross-entropy averaged over a set of labelled nodes (the loss of semi-supervised node
 * classification; Veličković et al. 2018 §3.3 train GAT with it): for each node i in the set,
 * {@code −log softmax(logits_i)[label_i]}, divided by the set's size. Nodes outside the set add
 * nothing and get a zero gradient. The gradient for node i is {@code (softmax(logits_i) −
 * onehot(label_i)) / |set|} (common practice).
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
   */
  public record Result(double loss, int correct, int count, double[] gradient) {

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
    Objects.requireNonNull(logits, "logits");
    Objects.requireNonNull(labels, "labels");
    Objects.requireNonNull(nodes, "nodes");
    if (classes < 1 || logits.length % classes != 0) {
      throw new IllegalArgumentException(
          "logits length " + logits.length + " is not a multiple of classes = " + classes);
    }
    int n = logits.length / classes;
    double[] gradient = withGradient ? new double[logits.length] : null;
    double total = 0;
    int correct = 0;
    double inv = nodes.length == 0 ? 0 : 1.0 / nodes.length;
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
      total += -(logits[at + label] - max - StrictMath.log(sum));
      if (best == label) {
        correct++;
      }
      if (gradient != null) {
        for (int c = 0; c < classes; c++) {
          gradient[at + c] += (p[c] / sum - (c == label ? 1.0 : 0.0)) * inv;
        }
      }
    }
    return new Result(total * inv, correct, nodes.length, gradient);
  }
}
