package dev.heed.train;

import dev.heed.train.layer.Parameter;
import java.util.List;

/**
 * Adam (Kingma &amp; Ba, "Adam: A Method for Stochastic Optimization", ICLR 2015, Algorithm 1) with
 * L2 weight decay added to the gradient ({@code g + λθ} for parameters marked as decayed, as an L2
 * penalty {@code λ/2·‖θ‖²} in the loss would give):
 *
 * <pre>
 *   m ← β1·m + (1 − β1)·g;   v ← β2·v + (1 − β2)·g²
 *   θ ← θ − lr · (m / (1 − β1ᵗ)) / (√(v / (1 − β2ᵗ)) + ε)
 * </pre>
 *
 * <p>Cost per step: O(number of parameters). Thread safety: mutable, not thread-safe.
 */
public final class AdamOptimizer {

  private final List<Parameter> parameters;
  private final TrainingSettings settings;
  private final double[][] firstMoment;
  private final double[][] secondMoment;
  private int steps;

  /**
   * Creates an optimizer with zero moments.
   *
   * @param parameters the parameters it updates, in a fixed order
   * @param settings learning rate, betas, ε, weight decay
   */
  public AdamOptimizer(List<Parameter> parameters, TrainingSettings settings) {
    this.parameters = List.copyOf(parameters);
    this.settings = java.util.Objects.requireNonNull(settings, "settings");
    this.firstMoment = new double[this.parameters.size()][];
    this.secondMoment = new double[this.parameters.size()][];
    for (int p = 0; p < this.parameters.size(); p++) {
      firstMoment[p] = new double[this.parameters.get(p).size()];
      secondMoment[p] = new double[this.parameters.get(p).size()];
    }
  }

  /**
   * Returns the number of steps taken.
   *
   * @return t
   */
  public int steps() {
    return steps;
  }

  /** Takes one step using each parameter's current gradient (which it does not modify). */
  public void step() {
    steps++;
    double b1 = settings.beta1();
    double b2 = settings.beta2();
    double correction1 = 1 - StrictMath.pow(b1, steps);
    double correction2 = 1 - StrictMath.pow(b2, steps);
    double lr = settings.learningRate();
    double eps = settings.epsilon();
    for (int p = 0; p < parameters.size(); p++) {
      Parameter param = parameters.get(p);
      double decay = param.decayed() ? settings.weightDecay() : 0.0;
      double[] theta = param.value();
      double[] g = param.gradient();
      double[] m = firstMoment[p];
      double[] v = secondMoment[p];
      for (int i = 0; i < theta.length; i++) {
        double grad = g[i] + decay * theta[i];
        m[i] = b1 * m[i] + (1 - b1) * grad;
        v[i] = b2 * v[i] + (1 - b2) * grad * grad;
        theta[i] -= lr * (m[i] / correction1) / (Math.sqrt(v[i] / correction2) + eps);
      }
    }
  }
}
