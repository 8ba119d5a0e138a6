package dev.heed.attention.dense;

import static dev.heed.live.LiveScoringChecks.assertMatches;
import static dev.heed.live.LiveScoringChecks.fullPass;
import static dev.heed.live.LiveScoringChecks.gaussian;
import static dev.heed.live.LiveScoringChecks.randomBatch;
import static dev.heed.live.LiveScoringChecks.relativeError;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.graph.DirectionPolicy;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveScoringChecks;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.PathChoice;
import dev.heed.model.RandomModels;
import java.util.ArrayList;
import java.util.List;
import java.util.SplittableRandom;
import java.util.stream.Stream;
import org.junit.jupiter.params.ParameterizedTest;
import org.junit.jupiter.params.provider.Arguments;
import org.junit.jupiter.params.provider.MethodSource;

/**
 * Incremental scoring on live graphs with the real kernels of both paths (and BLAS projections,
 * which this module plugs in): after every seeded random batch, the refreshed scores equal a
 * from-scratch full pass on the same path, and the sparse path's scores equal the dense path's.
 * Graphs: R-MAT (Chakrabarti, Zhan, Faloutsos, "R-MAT: A Recursive Model for Graph Mining", SDM
 * 2004, Graph500 initiator) and Zachary's karate club (Zachary 1977, via JGraphT), symmetrised and
 * directed; models: GAT, GATv2, dense (2 attention layers) and GAT, GATv2, GAT (3). Tolerance: 1e-5
 * norm-wise relative error per node.
 */
class LiveRefreshPathsTest {

  private static final int FEATURES = 6;
  private static final int CLASSES = 4;

  static Stream<Arguments> cases() {
    List<Arguments> all = new ArrayList<>();
    long seed = 6060L;
    for (boolean karate : new boolean[] {false, true}) {
      for (boolean symmetric : new boolean[] {true, false}) {
        for (int layers = 2; layers <= 3; layers++) {
          all.add(Arguments.of(karate, symmetric, layers, seed++));
        }
      }
    }
    return all.stream();
  }

  private static AttentionModel model(int layers, long seed) {
    if (layers == 2) {
      return RandomModels.gatGatv2Dense(seed, FEATURES, CLASSES);
    }
    return RandomModels.start(seed, FEATURES)
        .graphAttention("g1", "gat", 2, 4, true, "elu", true, "none")
        .graphAttention("g2", "gatv2", 2, 4, true, "relu", false, "identity")
        .graphAttention("g3", "gat", 2, 3, false, "identity", true, "linear")
        .dense("out", CLASSES, "identity")
        .softmax(CLASSES);
  }

  @ParameterizedTest
  @MethodSource("cases")
  void bothPathsMatchTheirFullPassAfterEveryBatch(
      boolean karate, boolean symmetric, int layers, long seed) {
    SplittableRandom random = new SplittableRandom(seed);
    int[][] edges =
        karate ? LiveScoringChecks.karateEdges() : LiveScoringChecks.rmatEdges(7, 4, seed);
    int n = karate ? 34 : 1 << 7;
    AttentionModel model = model(layers, seed);
    String name =
        (karate ? "karate club" : "R-MAT scale 7")
            + (symmetric ? " symmetrised" : " directed")
            + ", "
            + layers
            + " attention layers, seed "
            + seed;
    try (VersionedGraph<Integer> graph =
            LiveScoringChecks.load(
                n,
                edges[0],
                edges[1],
                gaussian(random, n * FEATURES),
                FEATURES,
                symmetric ? DirectionPolicy.SYMMETRISE : DirectionPolicy.KEEP);
        IncrementalScorer<Integer> sparse =
            IncrementalScorer.create(
                model, graph, RefreshOptions.defaults().withPath(PathChoice.SPARSE));
        IncrementalScorer<Integer> dense =
            IncrementalScorer.create(
                model,
                graph,
                RefreshOptions.defaults().withPath(PathChoice.DENSE).withWorkBudget(200))) {
      for (int b = 0; b < 15; b++) {
        randomBatch(graph, random, 1 + random.nextInt(6));
        LiveSnapshot<Integer> now = graph.snapshot();
        String where = name + ", batch " + b;
        assertTrue(sparse.refresh().isComplete(), where);
        RefreshReport report;
        do {
          report = dense.refresh();
        } while (!report.isComplete());
        float[][] sparseFull = fullPass(model, now, PathChoice.SPARSE, layers);
        float[][] denseFull = fullPass(model, now, PathChoice.DENSE, layers);
        assertMatches(sparse, sparseFull, now.version(), where + ", sparse");
        assertMatches(dense, denseFull, now.version(), where + ", dense");
        for (int v = 0; v < now.nodeCount(); v++) {
          if (sparseFull[v] != null) {
            double error = relativeError(sparseFull[v], dense.score(v).probabilities());
            assertTrue(error <= LiveScoringChecks.TOLERANCE, where + ", across, node " + v);
          }
        }
      }
    }
  }
}
