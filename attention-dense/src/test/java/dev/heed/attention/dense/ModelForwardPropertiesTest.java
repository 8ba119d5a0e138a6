package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import dev.heed.classify.ClassifyOptions;
import dev.heed.classify.NodeClassifier;
import dev.heed.classify.NodeFeatures;
import dev.heed.classify.NodePrediction;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.GraphArbitraries;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelOutput;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import dev.heed.model.TestModels;
import java.util.SplittableRandom;
import net.jqwik.api.Arbitrary;
import net.jqwik.api.ForAll;
import net.jqwik.api.Property;
import net.jqwik.api.Provide;

/**
 * Properties of a model's forward pass (jqwik): a GAT layer, a GATv2 layer, a dense layer and the
 * softmax head ({@link RandomModels#gatGatv2Dense}) with fresh seeded weights and Gaussian
 * features, over random and degenerate graphs ({@link GraphArbitraries}), symmetrised with
 * self-loops (the GAT paper's setting, Veličković et al. 2018, §2.1):
 *
 * <ul>
 *   <li>both paths match the same model on the float64 reference attention;
 *   <li>each node's output is a probability distribution (softmax head);
 *   <li>scoring chosen nodes (their receptive field) gives their whole-graph rows;
 *   <li>renumbering the nodes renumbers the outputs (graph attention is permutation-equivariant:
 *       each node's output depends only on its neighbourhood, not on node order; Veličković et al.
 *       2018, §2.2).
 * </ul>
 *
 * Tolerance: 1e-4 norm-wise relative error per pass (three float32 layers).
 */
class ModelForwardPropertiesTest {

  private static final double TOLERANCE = 1e-4;
  private static final int FEATURES = 5;
  private static final int CLASSES = 3;

  @Provide
  Arbitrary<GraphArbitraries.EdgeList> edgeLists() {
    return GraphArbitraries.edgeLists(50).filter(e -> e.n() > 0);
  }

  @Property(tries = 25)
  void forwardPassAgreesAcrossPathsFieldsAndNodeOrders(
      @ForAll("edgeLists") GraphArbitraries.EdgeList edges, @ForAll long seed) {
    CsrGraph graph = edges.build(SelfLoopPolicy.ADD, DirectionPolicy.SYMMETRISE);
    int n = graph.nodeCount();
    SplittableRandom random = new SplittableRandom(seed);
    AttentionModel model = RandomModels.gatGatv2Dense(seed, FEATURES, CLASSES);
    float[] x = new float[n * FEATURES];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) random.nextGaussian();
    }
    ModelOutput reference =
        TestModels.withReferenceKernel(model).forward(graph, x, PathChoice.SPARSE, false);
    double[] ref = toDoubles(reference.values());
    ModelOutput sparse = model.forward(graph, x, PathChoice.SPARSE, false);
    ModelOutput dense = model.forward(graph, x, PathChoice.DENSE, false);
    assertClose(ref, sparse.values(), "sparse vs reference");
    assertClose(ref, dense.values(), "dense vs reference");
    for (int i = 0; i < n; i++) {
      double sum = 0;
      for (float p : sparse.row(i)) {
        assertTrue(p >= 0 && p <= 1, "probability " + p);
        sum += p;
      }
      assertEquals(1.0, sum, 1e-5, "node " + i);
    }

    int[] targets = {random.nextInt(n), random.nextInt(n), 0, n - 1};
    for (NodePrediction p :
        NodeClassifier.of(model, ClassifyOptions.defaults().withPath(PathChoice.SPARSE))
            .classify(graph, NodeFeatures.ofRowMajor(x, n, FEATURES), targets)
            .predictions()) {
      assertClose(toDoubles(sparse.row(p.node())), p.probabilities(), "field, node " + p.node());
    }

    // renumber: node i becomes perm[i]
    int[] perm = permutation(n, random);
    int[] src = new int[(int) graph.entryCount()];
    int[] dst = new int[src.length];
    int k = 0;
    for (int i = 0; i < n; i++) {
      for (int e = graph.rowStart(i); e < graph.rowEnd(i); e++) {
        src[k] = perm[graph.column(e)];
        dst[k++] = perm[i];
      }
    }
    CsrGraph renumbered =
        CsrGraphBuilder.fromEdges(src, dst, n).selfLoops(SelfLoopPolicy.AS_GIVEN).build();
    float[] xr = new float[x.length];
    for (int i = 0; i < n; i++) {
      System.arraycopy(x, i * FEATURES, xr, perm[i] * FEATURES, FEATURES);
    }
    ModelOutput moved = model.forward(renumbered, xr, PathChoice.SPARSE, false);
    for (int i = 0; i < n; i++) {
      assertClose(toDoubles(sparse.row(i)), moved.row(perm[i]), "renumbered node " + i);
    }
  }

  private static int[] permutation(int n, SplittableRandom random) {
    int[] p = new int[n];
    for (int i = 0; i < n; i++) {
      p[i] = i;
    }
    for (int i = n - 1; i > 0; i--) { // Fisher–Yates (common practice)
      int j = random.nextInt(i + 1);
      int t = p[i];
      p[i] = p[j];
      p[j] = t;
    }
    return p;
  }

  private static double[] toDoubles(float[] values) {
    double[] d = new double[values.length];
    for (int i = 0; i < d.length; i++) {
      d[i] = values[i];
    }
    return d;
  }

  private static void assertClose(double[] expected, float[] actual, String where) {
    double error = ReferenceAttention.relativeError(expected, actual);
    assertTrue(error <= TOLERANCE, where + ": relative error " + error);
  }
}
