package dev.heed.train;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.AttentionKernels;
import dev.heed.attention.ComputePath;
import dev.heed.attention.KernelOptions;
import dev.heed.train.attention.AttentionForward;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.layer.MaskedSoftmaxCrossEntropy;
import dev.heed.train.layer.Parameter;
import dev.heed.train.layer.PassContext;
import java.util.List;
import java.util.Objects;
import java.util.SplittableRandom;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Trains a {@link TrainingNetwork} on one graph, full batch: every epoch runs one training pass
 * over all nodes (dropout on), back-propagates the masked cross-entropy of the training nodes,
 * takes one {@link AdamOptimizer} step, then runs an evaluation pass (dropout off) for the training
 * and validation metrics.
 *
 * <p>Early stopping (as in Veličković et al. 2018, §3.3, from memory): the run stops when neither
 * the validation loss nor the validation accuracy has improved for {@code patience} epochs, and the
 * parameters of the epoch with the best validation accuracy (ties: lower validation loss) are put
 * back. Without validation nodes it runs {@code maxEpochs} and keeps the last parameters.
 *
 * <p>Reproducibility: initialization and dropout draw from {@link SplittableRandom}s split from
 * {@code settings.seed()}, all training arithmetic is single-threaded float64 in a fixed order, and
 * exponentials and logarithms use {@link StrictMath}, so the same seed, data, network shape and
 * attention forward pass give bit-identical parameters (the kernel's own arithmetic is the
 * kernel's: a kernel whose result depends on its thread count must run with a fixed count).
 *
 * <pre>{@code
 * FullBatchTrainer trainer = FullBatchTrainer.withKernel(AttentionKernels.forPath(SPARSE, options));
 * TrainingReport report = trainer.train(network, data, settings, TrainingListener.NONE);
 * ModelFile.write(network.toModel(classLabels, featureNames), Path.of("model.heed"));
 * }</pre>
 *
 * <p>Cost per epoch: two forward passes and one backward pass of the network.
 *
 * <p>Thread safety: immutable; one {@link #train} call per network at a time.
 */
public final class FullBatchTrainer {

  private static final Logger LOG = LoggerFactory.getLogger(FullBatchTrainer.class);

  private final AttentionForward attention;

  private FullBatchTrainer(AttentionForward attention) {
    this.attention = attention;
  }

  /**
   * A trainer whose attention forward pass is the serving kernel.
   *
   * @param kernel the kernel, for example from {@link dev.heed.attention.AttentionKernels#forPath}
   * @return the trainer
   */
  public static FullBatchTrainer withKernel(AttentionKernel kernel) {
    return new FullBatchTrainer(new KernelAttentionForward(kernel));
  }

  /**
   * A trainer on the production kernel: the sparse (CSR) kernel when {@code
   * dev.heed:attention-sparse} is on the class path, else the dense (ND4J) kernel, both with {@link
   * KernelOptions#defaults()}. The choice is logged once per call. Training attention is full-batch
   * over the whole graph, which is the sparse kernel's case (cost O(E) rather than O(n²)).
   *
   * @return the trainer
   */
  public static FullBatchTrainer withDefaultKernel() {
    return withKernel(defaultKernel());
  }

  /**
   * Returns the production kernel {@link #withDefaultKernel()} uses.
   *
   * @return the sparse kernel if available, else the dense one
   */
  public static AttentionKernel defaultKernel() {
    KernelOptions options = KernelOptions.defaults();
    try {
      AttentionKernel kernel = AttentionKernels.forPath(ComputePath.SPARSE, options);
      LOG.info("training attention: {}", kernel.describe());
      return kernel;
    } catch (IllegalStateException e) {
      AttentionKernel kernel = AttentionKernels.forPath(ComputePath.DENSE, options);
      LOG.warn(
          "training attention: no sparse kernel on the class path (add dev.heed:attention-sparse);"
              + " using {}",
          kernel.describe());
      return kernel;
    }
  }

  /**
   * A trainer with a given attention forward pass.
   *
   * @param attention the forward pass
   * @return the trainer
   */
  public static FullBatchTrainer withForward(AttentionForward attention) {
    return new FullBatchTrainer(Objects.requireNonNull(attention, "attention"));
  }

  /**
   * Initializes the network from the seed and trains it. On return the network holds the kept
   * parameters (see the class description); {@link TrainingNetwork#toModel} turns them into a
   * served model.
   *
   * @param network the network; re-initialized by this call
   * @param data graph, features, labels and node sets
   * @param settings optimizer, epochs, patience, seed
   * @param listener receives progress after each epoch
   * @return what the run did
   * @throws IllegalArgumentException if the network does not fit the data (feature width, class
   *     count)
   */
  public TrainingReport train(
      TrainingNetwork network,
      TrainingData data,
      TrainingSettings settings,
      TrainingListener listener) {
    Objects.requireNonNull(network, "network");
    Objects.requireNonNull(data, "data");
    Objects.requireNonNull(settings, "settings");
    Objects.requireNonNull(listener, "listener");
    if (network.inputWidth() != data.featureWidth()) {
      throw new IllegalArgumentException(
          "the network reads "
              + network.inputWidth()
              + " features per node but the data has "
              + data.featureWidth());
    }
    if (network.classCount() != data.classCount()) {
      throw new IllegalArgumentException(
          "the network outputs "
              + network.classCount()
              + " logits per node but the data has "
              + data.classCount()
              + " classes");
    }
    long started = System.nanoTime();
    SplittableRandom root = new SplittableRandom(settings.seed());
    SplittableRandom initRandom = root.split();
    SplittableRandom dropoutRandom = root.split();
    network.initialize(initRandom);
    AdamOptimizer adam = new AdamOptimizer(network.parameters(), settings);
    double[] features = data.featuresShared();
    int[] labels = data.labelsShared();
    int[] trainNodes = data.trainingNodesShared();
    int[] validationNodes = data.validationNodesShared();
    boolean validating = validationNodes.length > 0;
    int classes = data.classCount();
    double[] weights = data.classWeightsShared();
    PassContext evaluation = PassContext.evaluation(data.pattern(), attention);

    List<Parameter> params = network.parameters();
    double[][] kept = snapshot(params);
    int bestEpoch = 0;
    double bestAccuracy = Double.NEGATIVE_INFINITY;
    double bestLoss = Double.POSITIVE_INFINITY;
    double keptAccuracy = Double.NEGATIVE_INFINITY;
    double keptLoss = Double.POSITIVE_INFINITY;
    int sinceImprovement = 0;
    int epoch = 0;
    boolean stoppedEarly = false;
    while (epoch < settings.maxEpochs()) {
      epoch++;
      network.clearGradients();
      PassContext training = PassContext.training(data.pattern(), attention, dropoutRandom);
      double[] logits = network.forward(features, training);
      MaskedSoftmaxCrossEntropy.Result loss =
          MaskedSoftmaxCrossEntropy.evaluate(logits, classes, labels, trainNodes, true, weights);
      if (!Double.isFinite(loss.loss())) {
        throw new IllegalStateException(
            "training loss became "
                + loss.loss()
                + " at epoch "
                + epoch
                + "; lower the learning rate");
      }
      network.backward(loss.gradient(), false);
      adam.step();

      double[] evalLogits = network.forward(features, evaluation);
      MaskedSoftmaxCrossEntropy.Result train =
          MaskedSoftmaxCrossEntropy.evaluate(
              evalLogits, classes, labels, trainNodes, false, weights);
      MaskedSoftmaxCrossEntropy.Result validation =
          MaskedSoftmaxCrossEntropy.evaluate(
              evalLogits, classes, labels, validationNodes, false, weights);
      double seconds = (System.nanoTime() - started) / 1e9;
      double validationLoss = validating ? validation.loss() : Double.NaN;
      EpochProgress progress =
          new EpochProgress(
              epoch,
              loss.loss(),
              train.weightedAccuracy(),
              validation.weightedAccuracy(),
              validationLoss,
              seconds);
      LOG.debug("{}", progress);
      listener.onEpoch(progress);

      if (!validating) {
        continue;
      }
      double accuracy = validation.weightedAccuracy();
      boolean improved = false;
      if (accuracy > bestAccuracy) {
        bestAccuracy = accuracy;
        improved = true;
      }
      if (validationLoss < bestLoss) {
        bestLoss = validationLoss;
        improved = true;
      }
      if (accuracy > keptAccuracy || (accuracy == keptAccuracy && validationLoss < keptLoss)) {
        keptAccuracy = accuracy;
        keptLoss = validationLoss;
        bestEpoch = epoch;
        copyInto(params, kept);
      }
      sinceImprovement = improved ? 0 : sinceImprovement + 1;
      if (sinceImprovement >= settings.patience()) {
        stoppedEarly = epoch < settings.maxEpochs();
        break;
      }
    }
    if (validating) {
      restore(params, kept);
    } else {
      bestEpoch = epoch;
    }
    double[] finalLogits = network.forward(features, evaluation);
    MaskedSoftmaxCrossEntropy.Result train =
        MaskedSoftmaxCrossEntropy.evaluate(
            finalLogits, classes, labels, trainNodes, false, weights);
    MaskedSoftmaxCrossEntropy.Result validation =
        MaskedSoftmaxCrossEntropy.evaluate(
            finalLogits, classes, labels, validationNodes, false, weights);
    double seconds = (System.nanoTime() - started) / 1e9;
    TrainingReport report =
        new TrainingReport(
            epoch,
            bestEpoch,
            stoppedEarly,
            train.loss(),
            train.weightedAccuracy(),
            validating ? validation.loss() : Double.NaN,
            validation.weightedAccuracy(),
            seconds);
    LOG.info("training finished: {}", report);
    return report;
  }

  private static double[][] snapshot(List<Parameter> params) {
    double[][] copy = new double[params.size()][];
    for (int p = 0; p < copy.length; p++) {
      copy[p] = params.get(p).value().clone();
    }
    return copy;
  }

  private static void copyInto(List<Parameter> params, double[][] target) {
    for (int p = 0; p < target.length; p++) {
      double[] v = params.get(p).value();
      System.arraycopy(v, 0, target[p], 0, v.length);
    }
  }

  private static void restore(List<Parameter> params, double[][] source) {
    for (int p = 0; p < source.length; p++) {
      double[] v = params.get(p).value();
      System.arraycopy(source[p], 0, v, 0, v.length);
    }
  }
}
