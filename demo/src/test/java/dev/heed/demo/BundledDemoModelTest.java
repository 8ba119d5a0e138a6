package dev.heed.demo;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.io.InputStream;
import java.util.List;
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

  @Test
  void committedModelKeepsItsHeldOutAccuracy() throws IOException {
    AttentionModel model;
    try (InputStream in = BundledDemoModelTest.class.getResourceAsStream("payments-demo.heed")) {
      assertNotNull(in, "payments-demo.heed is not on the class path");
      model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    }
    assertEquals(PaymentsNetwork.ROLES, model.classLabels());
    assertEquals(PaymentsNetworkGenerator.FEATURE_NAMES, model.featureNames());

    PaymentsNetwork payments = PaymentsNetworkGenerator.bundledDemo().generate();
    CsrGraph graph = DemoGraph.build(payments);
    int n = payments.accountCount();
    NodeClassifier classifier =
        NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE));
    List<NodePrediction> predictions =
        classifier
            .classify(
                graph,
                NodeFeatures.ofRowMajor(payments.features(), n, payments.featureNames().size()))
            .predictions();
    int[] predicted = new int[n];
    for (int i = 0; i < n; i++) {
      predicted[i] = predictions.get(i).labelIndex();
    }
    HeldOutScore test = HeldOutScore.of(predicted, payments, PaymentsNetwork.Split.TEST);
    LOG.info("committed demo model, served on the sparse path: {}", test);
    assertTrue(test.accuracy() >= ACCURACY_FLOOR, "TEST " + test);
    assertTrue(test.recall("mule-ring") >= MULE_RECALL_FLOOR, "TEST " + test);
  }
}
