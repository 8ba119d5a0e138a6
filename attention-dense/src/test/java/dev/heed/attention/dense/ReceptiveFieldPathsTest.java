package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ComputePath;
import dev.heed.classify.Classification;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.classify.StaticGraphScorer;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.graph.generate.RmatGenerator;
import dev.heed.model.AttentionModel;
import dev.heed.model.LayerRun;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * Receptive-field scoring with the real kernels of both paths (and BLAS projections, which this
 * module plugs in): the targets' outputs against a whole-graph pass on the same path and on the
 * other path. Graphs are R-MAT graphs ({@link RmatGenerator}: Chakrabarti, Zhan, Faloutsos, "R-MAT:
 * A Recursive Model for Graph Mining", SDM 2004, Graph500 initiator), symmetrised with self-loops;
 * models and features are fresh seeded Gaussian values. Tolerance: 1e-5 norm-wise relative error
 * (largest difference over largest value) per node.
 */
class ReceptiveFieldPathsTest {

  private static final double TOLERANCE = 1e-5;

  private static CsrGraph rmat(int scale, int edgeFactor, long seed) {
    return RmatGenerator.withScale(scale)
        .edgeFactor(edgeFactor)
        .seed(seed)
        .generateEdges()
        .direction(DirectionPolicy.SYMMETRISE)
        .selfLoops(SelfLoopPolicy.ADD)
        .build();
  }

  private static float[] gaussian(int length, Random random) {
    float[] x = new float[length];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    return x;
  }

  private static double relativeError(float[] expected, float[] actual) {
    double diff = 0;
    double size = 0;
    for (int i = 0; i < expected.length; i++) {
      diff = Math.max(diff, Math.abs((double) expected[i] - actual[i]));
      size = Math.max(size, Math.abs(expected[i]));
    }
    return diff / size;
  }

  private static void assertClose(ModelOutput whole, Classification field, String where) {
    for (NodePrediction p : field.predictions()) {
      double error = relativeError(whole.row(p.node()), p.probabilities());
      assertTrue(error <= TOLERANCE, where + ", node " + p.node() + ": relative error " + error);
    }
  }

  /**
   * Plain fields, and fields that stop at kept hub rows ({@code NodeClassifier.forStaticGraph},
   * rows of in-degree 8 or more; the highest-degree node is a target, so one target is a lookup).
   */
  @Test
  void fieldsMatchTheWholeGraphOnBothPathsAndAcross() {
    Random random = new Random(404L);
    CsrGraph graph = rmat(9, 4, 404L);
    int features = 6;
    float[] x = gaussian(graph.nodeCount() * features, random);
    NodeFeatures nodeFeatures = NodeFeatures.ofRowMajor(x, graph.nodeCount(), features);
    AttentionModel model = RandomModels.gatGatv2Dense(404L, features, 4);
    int[] targets = new int[16];
    for (int i = 0; i < targets.length; i++) {
      targets[i] = random.nextInt(graph.nodeCount());
    }
    targets[0] = hub(graph);
    ModelOutput sparse = model.forward(graph, x, PathChoice.SPARSE, false);
    ModelOutput dense = model.forward(graph, x, PathChoice.DENSE, false);
    for (PathChoice path : new PathChoice[] {PathChoice.SPARSE, PathChoice.DENSE}) {
      Classification field =
          NodeClassifier.of(model, ClassifyOptions.defaults().withPath(path))
              .classify(graph, nodeFeatures, targets);
      assertFalse(field.wholeGraph());
      for (LayerRun run : field.layerRuns()) {
        run.path()
            .ifPresent(
                p ->
                    assertEquals(
                        path == PathChoice.SPARSE ? ComputePath.SPARSE : ComputePath.DENSE, p));
      }
      assertClose(path == PathChoice.SPARSE ? sparse : dense, field, path + " field vs whole");
      assertClose(path == PathChoice.SPARSE ? dense : sparse, field, path + " field vs other path");
      // kept hub rows, prepared and queried on this path
      StaticGraphScorer scorer =
          NodeClassifier.of(model, ClassifyOptions.defaults().withPath(path))
              .forStaticGraph(graph, nodeFeatures, 8);
      Classification kept = scorer.classify(targets);
      assertTrue(scorer.keptRowCount() > 0 && kept.fieldSize().keptRows() > 0);
      assertClose(path == PathChoice.SPARSE ? sparse : dense, kept, path + " kept vs whole");
      assertClose(path == PathChoice.SPARSE ? dense : sparse, kept, path + " kept vs other path");
    }
  }

  private static int hub(CsrGraph graph) {
    int hub = 0;
    for (int v = 1; v < graph.nodeCount(); v++) {
      if (graph.degree(v) > graph.degree(hub)) {
        hub = v;
      }
    }
    return hub;
  }

  @Test
  void largeFieldsProjectThroughBlas() {
    // 64 features into 8 heads × 8: 2048 or more rows cross the size at which projections go to
    // BLAS; the first layer computes that many rows (its linear residual projects a prefix of the
    // rows it reads) and reads more.
    Random random = new Random(405L);
    CsrGraph graph = rmat(13, 8, 405L);
    int features = 64;
    float[] x = gaussian(graph.nodeCount() * features, random);
    AttentionModel model =
        RandomModels.start(405L, features)
            .graphAttention("gat1", "gat", 8, 8, true, "elu", true, "linear")
            .graphAttention("gat2", "gat", 8, 8, true, "elu", false, "identity")
            .dense("dense", 5, "identity")
            .softmax(5);
    int hub = hub(graph);
    int[] targets = new int[400];
    targets[0] = hub;
    for (int i = 1; i < targets.length; i++) {
      targets[i] = random.nextInt(graph.nodeCount());
    }
    Classification field =
        NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE))
            .classify(graph, NodeFeatures.ofRowMajor(x, graph.nodeCount(), features), targets);
    LayerRun first = field.layerRuns().get(0);
    String rows = first.rowsComputed() + " of " + first.rowsRead() + " rows";
    assertTrue(first.rowsComputed() >= 2048 && first.rowsComputed() < first.rowsRead(), rows);
    assertClose(model.forward(graph, x, PathChoice.SPARSE, false), field, "BLAS-sized field");
  }
}
