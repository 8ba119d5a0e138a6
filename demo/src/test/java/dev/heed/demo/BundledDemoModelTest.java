package dev.heed.demo;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.NodeRowPrecision;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.classify.StaticGraphScorer;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.LocalityOrder;
import dev.heed.model.AttentionModel;
import dev.heed.model.CheckVectors;
import dev.heed.model.Layer;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import dev.heed.train.TrainingNetwork;
import dev.heed.train.layer.Parameter;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.util.List;
import java.util.Optional;
import org.junit.jupiter.api.Test;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The committed demo model, served as a user would serve it: load {@code payments-demo.heed} from
 * the class path, regenerate the bundled network (seeded, so the same accounts and splits the model
 * was trained on), build {@link DemoGraph}, classify every account with the sparse kernel, and
 * score the held-out TEST split. Floors sit well below the figures recorded in demo/README.md, so
 * that noise cannot fail the test but a broken model, graph policy or kernel does; chance accuracy
 * by always answering "ordinary" is 0.90, with mule-ring recall 0.
 */
class BundledDemoModelTest {

  private static final Logger LOG = LoggerFactory.getLogger(BundledDemoModelTest.class);

  /** Floor on TEST accuracy (recorded figure in demo/README.md). */
  static final double ACCURACY_FLOOR = 0.93;

  /** Floor on TEST recall of mule-ring accounts (recorded figure in demo/README.md). */
  static final double MULE_RECALL_FLOOR = 0.85;

  /**
   * The committed file is what the trainer's export writes for its weights, check vectors included:
   * the demo network ({@link DemoTraining#gat}) given the committed weights and exported through
   * {@link TrainingNetwork#toModel}, with the demo graph's conventions recorded as {@link
   * DemoTraining} records them, gives the committed bytes. So retraining reproduces the file byte
   * for byte, and its check vectors are the trainer's own float64 evaluation pass, which loading
   * the file compares with the serving layers.
   */
  @Test
  void committedFileIsTheTrainersExportOfItsWeights() throws IOException {
    byte[] committed;
    try (InputStream in = BundledDemoModelTest.class.getResourceAsStream("payments-demo.heed")) {
      committed = in.readAllBytes();
    }
    AttentionModel model =
        ModelFile.read(
            new ByteArrayInputStream(committed), "payments-demo.heed", NpyLimits.defaults());
    CheckVectors checks = model.checks().orElseThrow();
    assertEquals(TrainingNetwork.CHECKS_COMPUTED_BY, checks.computedBy());
    LOG.info(
        "committed demo model, check vectors on the sparse path: {}",
        checks.compare(model, PathChoice.SPARSE).describe("-"));
    TrainingNetwork network = DemoTraining.gat(PaymentsNetworkGenerator.FEATURE_NAMES.size());
    for (int i = 0; i < network.layers().size(); i++) {
      Layer served = model.layers().get(i);
      for (Parameter p : network.layers().get(i).parameters()) {
        float[] stored = served.tensorValues(p.name());
        for (int k = 0; k < stored.length; k++) {
          p.value()[k] = stored[k];
        }
      }
    }
    assertArrayEquals(
        committed,
        ModelFile.toBytes(
            network
                .toModel(PaymentsNetwork.ROLES, PaymentsNetworkGenerator.FEATURE_NAMES)
                .withGraphPolicies(DemoGraph.CONVENTIONS)));
    assertEquals(Optional.of(DemoGraph.CONVENTIONS), model.graphPolicies());
  }

  @Test
  void committedModelKeepsItsHeldOutAccuracy() throws IOException {
    AttentionModel model = committedModel();
    assertEquals(PaymentsNetwork.ROLES, model.classLabels());
    assertEquals(PaymentsNetworkGenerator.FEATURE_NAMES, model.featureNames());

    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    HeldOutScore test =
        heldOut(model, payments, ClassifyOptions.defaults().withPath(PathChoice.SPARSE));
    LOG.info("committed demo model, served on the sparse path: {}", test);
    assertTrue(test.accuracy() >= ACCURACY_FLOOR, "TEST " + test);
    assertTrue(test.recall("mule-ring") >= MULE_RECALL_FLOOR, "TEST " + test);
  }

  /**
   * Value rows in bfloat16 ({@link NodeRowPrecision#BFLOAT16}: each value rounded to 8 significand
   * bits, at most 2^-8 of Σ α|v| per output of an attention layer) keep the held-out TEST accuracy
   * and every role's recall within 0.002 of the float32 path, on the TEST and VALIDATION splits.
   */
  @Test
  void bfloat16NodeRowsKeepTheHeldOutScores() throws IOException {
    AttentionModel model = committedModel();
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    ClassifyOptions sparse = ClassifyOptions.defaults().withPath(PathChoice.SPARSE);
    for (PaymentsNetwork.Split split :
        List.of(PaymentsNetwork.Split.TEST, PaymentsNetwork.Split.VALIDATION)) {
      Scored float32 = heldOut(model, payments, sparse, split);
      Scored bfloat16 =
          heldOut(model, payments, sparse.withNodeRowPrecision(NodeRowPrecision.BFLOAT16), split);
      LOG.info(
          "demo model, float32 rows: {}; bfloat16 rows: {}", float32.score(), bfloat16.score());
      assertTrue(
          float32.probabilitySum() != bfloat16.probabilitySum(),
          "bfloat16 rows must change some probabilities; was the option taken?");
      assertEquals(float32.accuracy(), bfloat16.accuracy(), 0.002, "accuracy, " + split);
      for (String role : PaymentsNetwork.ROLES) {
        assertEquals(
            float32.recall(role), bfloat16.recall(role), 0.002, "recall " + role + ", " + split);
      }
    }
  }

  /**
   * Classifying in a node layout ({@link CsrGraph#withLocalityOrder}) returns every prediction at
   * the caller's id: the same labels and held-out scores, probabilities within float rounding (each
   * row's sources are summed in another order), with float32 and with bfloat16 rows.
   */
  @Test
  void nodeLayoutsGiveTheSamePredictionsAtTheCallersIds() throws IOException {
    AttentionModel model = committedModel();
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    CsrGraph graph = DemoGraph.build(payments);
    int n = payments.accountCount();
    NodeFeatures features = features(payments);
    for (NodeRowPrecision rows : NodeRowPrecision.values()) {
      ClassifyOptions options =
          ClassifyOptions.defaults().withPath(PathChoice.SPARSE).withNodeRowPrecision(rows);
      NodeClassifier classifier = NodeClassifier.of(model, options);
      List<NodePrediction> plain = classifier.classify(graph, features).predictions();
      for (LocalityOrder method : LocalityOrder.values()) {
        String where = rows + ", " + method;
        List<NodePrediction> laidOut =
            classifier.classify(graph.withLocalityOrder(method), features).predictions();
        int[] predicted = new int[n];
        for (int i = 0; i < n; i++) {
          NodePrediction a = plain.get(i);
          NodePrediction b = laidOut.get(i);
          assertEquals(i, b.node(), where);
          float[] pa = a.probabilities();
          float[] pb = b.probabilities();
          for (int c = 0; c < pa.length; c++) {
            assertEquals(pa[c], pb[c], 1e-5, where + ", node " + i + ", class " + c);
          }
          predicted[i] = b.labelIndex();
        }
        HeldOutScore test = HeldOutScore.of(predicted, payments, PaymentsNetwork.Split.TEST);
        assertEquals(heldOut(model, payments, options).accuracy(), test.accuracy(), 0.002, where);
      }
    }
  }

  /**
   * A scorer with kept hub rows ({@link NodeClassifier#forStaticGraph}, rows of at least the median
   * in-degree kept) on the demo graph gives every account the whole-graph pass's probabilities
   * within 1e-5 (norm-wise relative error), for hub targets (lookups) and for the rest (fields that
   * stop at hubs).
   */
  @Test
  void keptHubRowsGiveTheWholeGraphsProbabilities() throws IOException {
    AttentionModel model = committedModel();
    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    CsrGraph graph = DemoGraph.build(payments);
    int n = payments.accountCount();
    NodeFeatures features = features(payments);
    NodeClassifier classifier =
        NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE));
    List<NodePrediction> whole = classifier.classify(graph, features).predictions();
    // the median in-degree as the threshold: about half the accounts kept, half computed
    int[] degrees = new int[n];
    for (int i = 0; i < n; i++) {
      degrees[i] = graph.degree(i);
    }
    java.util.Arrays.sort(degrees);
    StaticGraphScorer scorer = classifier.forStaticGraph(graph, features, degrees[n / 2]);
    LOG.info("demo graph, kept hub rows: {}", scorer);
    assertTrue(
        scorer.keptRowCount() > n / 10 && scorer.keptRowCount() < n - n / 10, scorer.toString());
    int[] everyone = new int[n];
    for (int i = 0; i < n; i++) {
      everyone[i] = i;
    }
    List<NodePrediction> kept = scorer.classify(everyone).predictions();
    for (int i = 0; i < n; i++) {
      float[] expected = whole.get(i).probabilities();
      float[] got = kept.get(i).probabilities();
      double diff = 0;
      double size = 0;
      for (int c = 0; c < expected.length; c++) {
        diff = Math.max(diff, Math.abs((double) expected[c] - got[c]));
        size = Math.max(size, Math.abs(expected[c]));
      }
      assertTrue(diff <= 1e-5 * size, "account " + i + ": relative error " + diff / size);
    }
  }

  private static NodeFeatures features(PaymentsNetwork payments) {
    return NodeFeatures.ofRowMajor(
        payments.features(), payments.accountCount(), payments.featureNames().size());
  }

  private static AttentionModel committedModel() throws IOException {
    try (InputStream in = BundledDemoModelTest.class.getResourceAsStream("payments-demo.heed")) {
      assertNotNull(in, "payments-demo.heed is not on the class path");
      return ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    }
  }

  private static HeldOutScore heldOut(
      AttentionModel model, PaymentsNetwork payments, ClassifyOptions options) {
    return heldOut(model, payments, options, PaymentsNetwork.Split.TEST).score();
  }

  /** A split's score, and the sum of every account's top probability (a fingerprint). */
  private record Scored(HeldOutScore score, double probabilitySum) {
    double accuracy() {
      return score.accuracy();
    }

    double recall(String role) {
      return score.recall(role);
    }
  }

  /** Classifies every account of the demo graph and scores one split. */
  private static Scored heldOut(
      AttentionModel model,
      PaymentsNetwork payments,
      ClassifyOptions options,
      PaymentsNetwork.Split split) {
    CsrGraph graph = DemoGraph.build(payments);
    int n = payments.accountCount();
    List<NodePrediction> predictions =
        NodeClassifier.of(model, options).classify(graph, features(payments)).predictions();
    int[] predicted = new int[n];
    double probabilitySum = 0;
    for (int i = 0; i < n; i++) {
      predicted[i] = predictions.get(i).labelIndex();
      probabilitySum += predictions.get(i).probability();
    }
    return new Scored(HeldOutScore.of(predicted, payments, split), probabilitySum);
  }
}
