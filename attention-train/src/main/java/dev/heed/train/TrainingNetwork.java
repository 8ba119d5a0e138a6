package dev.heed.train;

import dev.heed.train.layer.Parameter;
import dev.heed.train.layer.PassContext;
import dev.heed.train.layer.TrainingLayer;
import dev.heed.train.model.TrainedLayer;
import dev.heed.train.model.TrainedParameters;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * A stack of {@link TrainingLayer}s whose last layer outputs one logit per class. The widths must
 * chain: each layer's input width is the previous layer's output width.
 *
 * <pre>{@code
 * TrainingNetwork gat = TrainingNetwork.of(
 *     GraphAttentionTrainingLayer.builder(features, 8, 8).inputDropout(0.6).attentionDropout(0.6).build(),
 *     GraphAttentionTrainingLayer.builder(64, 1, classes).activation(Activation.IDENTITY)
 *         .headMerge(HeadMerge.MEAN).inputDropout(0.6).attentionDropout(0.6).build());
 * }</pre>
 *
 * <p>Thread safety: mutable (its layers are), not thread-safe.
 */
public final class TrainingNetwork {

  private final List<TrainingLayer> layers;
  private final List<Parameter> parameters;

  private TrainingNetwork(List<TrainingLayer> layers) {
    this.layers = layers;
    List<Parameter> all = new ArrayList<>();
    for (TrainingLayer layer : layers) {
      all.addAll(layer.parameters());
    }
    this.parameters = List.copyOf(all);
  }

  /**
   * Stacks layers, input first.
   *
   * @param layers at least one layer; widths must chain
   * @return the network
   * @throws IllegalArgumentException if there is no layer or two neighbours' widths differ
   */
  public static TrainingNetwork of(TrainingLayer... layers) {
    return of(List.of(layers));
  }

  /**
   * Stacks layers, input first.
   *
   * @param layers at least one layer; widths must chain
   * @return the network
   * @throws IllegalArgumentException if there is no layer or two neighbours' widths differ
   */
  public static TrainingNetwork of(List<TrainingLayer> layers) {
    List<TrainingLayer> copy = List.copyOf(layers);
    if (copy.isEmpty()) {
      throw new IllegalArgumentException("a network needs at least one layer");
    }
    for (int i = 1; i < copy.size(); i++) {
      if (copy.get(i).inputWidth() != copy.get(i - 1).outputWidth()) {
        throw new IllegalArgumentException(
            "layer "
                + i
                + " ("
                + copy.get(i)
                + ") reads "
                + copy.get(i).inputWidth()
                + " features but layer "
                + (i - 1)
                + " ("
                + copy.get(i - 1)
                + ") writes "
                + copy.get(i - 1).outputWidth());
      }
    }
    return new TrainingNetwork(copy);
  }

  /**
   * Returns the layers, input first.
   *
   * @return an unmodifiable list
   */
  public List<TrainingLayer> layers() {
    return layers;
  }

  /**
   * Returns the features per node the first layer reads.
   *
   * @return the input width
   */
  public int inputWidth() {
    return layers.get(0).inputWidth();
  }

  /**
   * Returns the number of classes (the last layer's output width).
   *
   * @return the class count
   */
  public int classCount() {
    return layers.get(layers.size() - 1).outputWidth();
  }

  /**
   * Returns every parameter, layer by layer, in a fixed order.
   *
   * @return an unmodifiable list of the live parameters
   */
  public List<Parameter> parameters() {
    return parameters;
  }

  /**
   * Initializes every layer from one random source, in layer order.
   *
   * @param random consumed
   */
  public void initialize(SplittableRandom random) {
    for (TrainingLayer layer : layers) {
      layer.initialize(random);
    }
  }

  /**
   * Runs every layer forward, caching for {@link #backward}.
   *
   * @param features input, not modified: {@code n * inputWidth()}
   * @param context the pass
   * @return logits, {@code n * classCount()}
   */
  public double[] forward(double[] features, PassContext context) {
    double[] h = features;
    for (TrainingLayer layer : layers) {
      h = layer.forward(h, context);
    }
    return h;
  }

  /**
   * Back-propagates the logits' gradient through every layer, accumulating parameter gradients.
   *
   * @param logitGradient input, not modified: {@code n * classCount()}
   * @param featureGradient whether to compute dLoss/dFeatures (training does not need it)
   * @return dLoss/dFeatures, or null if not requested
   */
  public double[] backward(double[] logitGradient, boolean featureGradient) {
    double[] g = logitGradient;
    for (int i = layers.size() - 1; i >= 0; i--) {
      g = layers.get(i).backward(g, i > 0 || featureGradient);
    }
    return g;
  }

  /** Sets every parameter's gradient to zero. */
  public void clearGradients() {
    for (Parameter p : parameters) {
      p.clearGradient();
    }
  }

  /**
   * Exports the current parameters in plain form (values rounded to float32).
   *
   * @return the trained parameters
   */
  public TrainedParameters export() {
    List<TrainedLayer> out = new ArrayList<>();
    for (TrainingLayer layer : layers) {
      out.add(layer.export());
    }
    return new TrainedParameters(inputWidth(), classCount(), out);
  }
}
