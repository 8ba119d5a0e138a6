package dev.heed.demo;

import dev.heed.graph.CsrGraph;
import dev.heed.model.Activation;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.train.FullBatchTrainer;
import dev.heed.train.TrainingData;
import dev.heed.train.TrainingListener;
import dev.heed.train.TrainingNetwork;
import dev.heed.train.TrainingReport;
import dev.heed.train.TrainingSettings;
import dev.heed.train.attention.KernelAttentionForward;
import dev.heed.train.layer.DenseTrainingLayer;
import dev.heed.train.layer.GraphAttentionTrainingLayer;
import dev.heed.train.layer.HeadMerge;
import dev.heed.train.layer.PassContext;
import java.io.IOException;
import java.nio.file.Path;
import java.util.Objects;

/**
 * How the bundled demo model is trained: a two-layer GAT (Veličković et al. 2018) on the demo graph
 * ({@link DemoGraph}) with the TRAIN split's roles as labels and early stopping on the VALIDATION
 * split. The TEST split is never seen in training; {@link Outcome#test()} scores it.
 *
 * <p>Network: {@value #HIDDEN_HEADS} heads × {@value #HEAD_WIDTH} features, ELU, heads concatenated
 * (eq. 5); then {@value #OUTPUT_HEADS} heads of width 3 (one per role), averaged (eq. 6), identity;
 * the model file adds the softmax head. The loss weighs each role by its inverse frequency among
 * the TRAIN accounts ({@link TrainingData#withBalancedClassWeights()}), so that the 2 % of
 * mule-ring accounts weigh as much as the ordinary ones, and early stopping watches the balanced
 * validation accuracy (mean per-role recall). Dropout {@value #DROPOUT} on inputs and attention
 * weights; Adam with learning rate {@value #LEARNING_RATE}, weight decay {@value #WEIGHT_DECAY}, at
 * most {@value #MAX_EPOCHS} epochs, patience {@value #PATIENCE}, seed {@value #SEED}. These values
 * were chosen for the demo (not tuned on TEST).
 *
 * <p>Deterministic: the same network and seed give the same model bit for bit (see {@link
 * FullBatchTrainer}).
 *
 * <p>Thread safety: stateless.
 */
public final class DemoTraining {

  /** Heads of the hidden layer. */
  public static final int HIDDEN_HEADS = 8;

  /** Width of each hidden head. */
  public static final int HEAD_WIDTH = 8;

  /** Heads of the output layer, averaged. */
  public static final int OUTPUT_HEADS = 1;

  /** Dropout rate on layer inputs and on attention weights. */
  public static final double DROPOUT = 0.1;

  /** Whether the loss weighs classes by inverse training frequency (mule rings are 2 %). */
  public static final boolean BALANCED_CLASS_WEIGHTS = true;

  /** Adam learning rate. */
  public static final double LEARNING_RATE = 0.02;

  /** L2 weight decay. */
  public static final double WEIGHT_DECAY = 5e-4;

  /** Most epochs. */
  public static final int MAX_EPOCHS = 100;

  /** Epochs without validation improvement before stopping. */
  public static final int PATIENCE = 15;

  /** Training seed. */
  public static final long SEED = 7L;

  private DemoTraining() {}

  /**
   * What a training run produced.
   *
   * @param model the trained network as a served model (float32), with the demo's feature names and
   *     role labels
   * @param report the trainer's report (epochs, best epoch, train / validation figures, seconds)
   * @param test held-out score on the TEST split, from the trainer's evaluation-mode forward pass
   */
  public record Outcome(AttentionModel model, TrainingReport report, HeldOutScore test) {

    /**
     * Writes the trained model as a Heed model file.
     *
     * @param file the destination, replaced if present
     * @throws IOException if writing fails
     */
    public void writeModel(Path file) throws IOException {
      ModelFile.write(model, file);
    }
  }

  /**
   * Returns the demo's GAT, untrained.
   *
   * @param featureCount input features per account
   * @return the network
   */
  public static TrainingNetwork gat(int featureCount) {
    return TrainingNetwork.of(
        GraphAttentionTrainingLayer.builder(featureCount, HIDDEN_HEADS, HEAD_WIDTH)
            .activation(Activation.ELU)
            .inputDropout(DROPOUT)
            .attentionDropout(DROPOUT)
            .build(),
        GraphAttentionTrainingLayer.builder(
                HIDDEN_HEADS * HEAD_WIDTH, OUTPUT_HEADS, PaymentsNetwork.ROLES.size())
            .headMerge(HeadMerge.MEAN)
            .activation(Activation.IDENTITY)
            .inputDropout(DROPOUT)
            .attentionDropout(DROPOUT)
            .build());
  }

  /**
   * Returns the features-only baseline, untrained: two dense layers of the GAT's widths, no graph.
   *
   * @param featureCount input features per account
   * @return the network
   */
  public static TrainingNetwork featuresOnly(int featureCount) {
    return TrainingNetwork.of(
        DenseTrainingLayer.builder(featureCount, HIDDEN_HEADS * HEAD_WIDTH)
            .activation(Activation.ELU)
            .inputDropout(DROPOUT)
            .build(),
        DenseTrainingLayer.builder(HIDDEN_HEADS * HEAD_WIDTH, PaymentsNetwork.ROLES.size())
            .activation(Activation.IDENTITY)
            .inputDropout(DROPOUT)
            .build());
  }

  /**
   * Returns the training settings of the demo.
   *
   * @return the settings
   */
  public static TrainingSettings settings() {
    return TrainingSettings.builder()
        .learningRate(LEARNING_RATE)
        .weightDecay(WEIGHT_DECAY)
        .maxEpochs(MAX_EPOCHS)
        .patience(PATIENCE)
        .seed(SEED)
        .build();
  }

  /**
   * Trains a network on a payments network over the demo graph with the production kernel ({@link
   * FullBatchTrainer#withDefaultKernel()}), then scores the TEST split.
   *
   * @param network the untrained network ({@link #gat} or {@link #featuresOnly})
   * @param payments the payments network
   * @param graph its demo graph ({@link DemoGraph#build})
   * @param listener told of every epoch
   * @return the outcome
   */
  public static Outcome train(
      TrainingNetwork network,
      PaymentsNetwork payments,
      CsrGraph graph,
      TrainingListener listener) {
    Objects.requireNonNull(network, "network");
    Objects.requireNonNull(payments, "payments");
    Objects.requireNonNull(graph, "graph");
    Objects.requireNonNull(listener, "listener");
    int n = payments.accountCount();
    PaymentsNetwork.Split[] splits = payments.splits();
    int[] train = nodesOf(splits, PaymentsNetwork.Split.TRAIN);
    int[] validation = nodesOf(splits, PaymentsNetwork.Split.VALIDATION);
    int featureCount = payments.featureNames().size();
    TrainingData data =
        TrainingData.of(
            graph,
            featureCount,
            payments.features(),
            PaymentsNetwork.ROLES.size(),
            payments.roles(),
            train,
            validation);
    if (BALANCED_CLASS_WEIGHTS) {
      data = data.withBalancedClassWeights();
    }
    var kernel = FullBatchTrainer.defaultKernel();
    TrainingReport report =
        FullBatchTrainer.withKernel(kernel).train(network, data, settings(), listener);
    double[] logits =
        network.forward(
            data.features(), PassContext.evaluation(graph, new KernelAttentionForward(kernel)));
    int classes = PaymentsNetwork.ROLES.size();
    int[] predicted = new int[n];
    for (int i = 0; i < n; i++) {
      int best = 0;
      for (int c = 1; c < classes; c++) {
        if (logits[i * classes + c] > logits[i * classes + best]) {
          best = c;
        }
      }
      predicted[i] = best;
    }
    return new Outcome(
        network
            .toModel(PaymentsNetwork.ROLES, payments.featureNames())
            .withGraphPolicies(DemoGraph.CONVENTIONS),
        report,
        HeldOutScore.of(predicted, payments, PaymentsNetwork.Split.TEST));
  }

  private static int[] nodesOf(PaymentsNetwork.Split[] splits, PaymentsNetwork.Split split) {
    int count = 0;
    for (PaymentsNetwork.Split s : splits) {
      count += s == split ? 1 : 0;
    }
    int[] out = new int[count];
    int k = 0;
    for (int i = 0; i < splits.length; i++) {
      if (splits[i] == split) {
        out[k++] = i;
      }
    }
    return out;
  }
}
