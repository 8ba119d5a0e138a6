package dev.heed.train;

import dev.heed.graph.CsrGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.CheckVectors;
import dev.heed.model.Layer;
import dev.heed.model.ModelFile;
import dev.heed.model.SoftmaxLayer;
import dev.heed.train.attention.Float64AttentionForward;
import dev.heed.train.layer.Parameter;
import dev.heed.train.layer.PassContext;
import dev.heed.train.layer.TrainingLayer;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;

/**
 * A stack of {@link TrainingLayer}s whose last layer outputs one logit per class. The widths must
 * chain: each layer's input width is the previous layer's output width. After training, {@link
 * #toModel} gives the served model and {@link ModelFile#write} saves it.
 *
 * <pre>{@code
 * TrainingNetwork gat = TrainingNetwork.of(
 *     GraphAttentionTrainingLayer.builder(features, 8, 8).inputDropout(0.6).attentionDropout(0.6).build(),
 *     GraphAttentionTrainingLayer.builder(64, 1, classes).activation(Activation.IDENTITY)
 *         .headMerge(HeadMerge.MEAN).inputDropout(0.6).attentionDropout(0.6).build());
 * // ... train ...
 * ModelFile.write(gat.toModel(List.of("ordinary", "merchant", "mule-ring"), featureNames),
 *     Path.of("payments.heed"));
 * }</pre>
 *
 * <p>Thread safety: mutable (its layers are), not thread-safe.
 */
public final class TrainingNetwork {

  /** Name of the softmax layer {@link #toModel} appends. */
  public static final String SOFTMAX_LAYER_NAME = "probabilities";

  /** What the check vectors of {@link #toModel} say computed them. */
  public static final String CHECKS_COMPUTED_BY =
      "attention-train TrainingNetwork (float64 evaluation pass, Float64AttentionForward)";

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
   * Returns the network as a served model (its parameters rounded to float32), without feature
   * names; see {@link #toModel(List, List)}.
   *
   * @param classLabels one label per class output, distinct
   * @return the model
   * @throws IllegalArgumentException as for {@link #toModel(List, List)}
   */
  public AttentionModel toModel(List<String> classLabels) {
    return toModel(classLabels, List.of());
  }

  /**
   * Returns the network as a served model: each layer's {@link TrainingLayer#export} (named {@code
   * layer0}, {@code layer1}, …, tensors {@code <layer>.<role>}), then a softmax layer named {@value
   * #SOFTMAX_LAYER_NAME}, because the training loss is softmax cross-entropy over the last layer's
   * outputs. The layers are built through {@code dev.heed.model}'s builders and stacked with {@link
   * AttentionModel#of}, so the model is checked as a model file would be; {@link ModelFile#write}
   * saves it. The served probabilities equal this network's evaluation-mode forward pass followed
   * by a softmax, to float32 rounding.
   *
   * <p>The model carries check vectors ({@link CheckVectors}, {@code docs/model-format.md}): the
   * probabilities of this network's own evaluation pass, in float64 with the parameters rounded to
   * float32 as the model holds them and float64 attention ({@link Float64AttentionForward}, not a
   * serving kernel), over {@link CheckVectors#sampleGraph()} and {@link
   * CheckVectors#sampleFeatures}, with {@link CheckVectors#DEFAULT_TOLERANCE}. {@link ModelFile}
   * writes them and compares them on every read. Computing them runs one evaluation pass over those
   * 8 nodes, which replaces what the layers keep for {@link #backward}: call this after training,
   * not between a forward pass and its backward pass. The parameters are left as they were.
   *
   * @param classLabels one label per class output, distinct, in the order of the outputs
   * @param featureNames one name per input feature in column order, or empty for none
   * @return the model with its check vectors, using kernels with the default options
   * @throws IllegalArgumentException if a layer has no serving form (the message says which and
   *     why), or the label or feature-name counts disagree with the network
   */
  public AttentionModel toModel(List<String> classLabels, List<String> featureNames) {
    List<String> labels = List.copyOf(classLabels);
    List<String> names = List.copyOf(featureNames);
    if (labels.size() != classCount()) {
      throw new IllegalArgumentException(
          "the network has "
              + classCount()
              + " class outputs but "
              + labels.size()
              + " class labels were given: "
              + labels);
    }
    if (!names.isEmpty() && names.size() != inputWidth()) {
      throw new IllegalArgumentException(
          "the network reads "
              + inputWidth()
              + " features but "
              + names.size()
              + " feature names were given");
    }
    List<Layer> served = new ArrayList<>();
    for (int i = 0; i < layers.size(); i++) {
      served.add(layers.get(i).export("layer" + i));
    }
    served.add(SoftmaxLayer.of(SOFTMAX_LAYER_NAME, classCount()));
    return AttentionModel.of(served, labels, names).withChecks(checkVectors());
  }

  /** The check vectors of {@link #toModel}; see there. */
  private CheckVectors checkVectors() {
    CsrGraph graph = CheckVectors.sampleGraph();
    float[] features = CheckVectors.sampleFeatures(inputWidth());
    double[] input = new double[features.length];
    for (int i = 0; i < input.length; i++) {
      input[i] = features[i];
    }
    List<double[]> trained = new ArrayList<>(parameters.size());
    for (Parameter p : parameters) {
      double[] v = p.value();
      trained.add(v.clone());
      for (int i = 0; i < v.length; i++) {
        v[i] = (float) v[i];
      }
    }
    double[] logits;
    try {
      logits = forward(input, PassContext.evaluation(graph, new Float64AttentionForward()));
    } finally {
      for (int k = 0; k < parameters.size(); k++) {
        double[] v = trained.get(k);
        System.arraycopy(v, 0, parameters.get(k).value(), 0, v.length);
      }
    }
    int classes = classCount();
    double[] probabilities = new double[logits.length];
    for (int row = 0; row < logits.length / classes; row++) {
      double max = Double.NEGATIVE_INFINITY;
      for (int c = 0; c < classes; c++) {
        max = Math.max(max, logits[row * classes + c]);
      }
      double sum = 0;
      for (int c = 0; c < classes; c++) {
        probabilities[row * classes + c] = StrictMath.exp(logits[row * classes + c] - max);
        sum += probabilities[row * classes + c];
      }
      for (int c = 0; c < classes; c++) {
        probabilities[row * classes + c] /= sum;
      }
    }
    return CheckVectors.of(
        graph,
        features,
        inputWidth(),
        probabilities,
        classes,
        CheckVectors.DEFAULT_TOLERANCE,
        CHECKS_COMPUTED_BY);
  }
}
