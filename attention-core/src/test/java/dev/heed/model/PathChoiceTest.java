package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import java.util.Optional;
import org.junit.jupiter.api.Test;

/** The documented AUTO rule, its fallback, and explicit paths that fail when absent. */
class PathChoiceTest {

  @Test
  void autoRuleFollowsPatternKindSizeDensityAndScore() {
    // The documented rule; its thresholds come from the crossover sweep in benchmarks/RESULTS.md.
    ScoreFunction gat = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
    ScoreFunction dot = ScoreFunction.scaledDotProduct();
    for (ScoreFunction score : new ScoreFunction[] {gat, dot}) {
      assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(CompletePattern.of(100_000), score));
      assertEquals(ComputePath.SPARSE, PathChoice.SPARSE.pathFor(CompletePattern.of(3), score));
    }
    CsrGraph chain = CsrGraph.of(new int[] {0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, new int[] {0});
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(chain, dot)); // density 0.01
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(chain, gat));
    assertEquals(ComputePath.DENSE, PathChoice.DENSE.pathFor(chain, gat));
    CsrGraph selfLoops = CsrGraph.of(new int[] {0, 1, 2, 3, 4}, new int[] {0, 1, 2, 3});
    // density 4/16 = 0.25: above the dot-product threshold, below the additive one
    assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(selfLoops, dot));
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(selfLoops, gat));
    CsrGraph threeQuarters =
        CsrGraph.of(
            new int[] {0, 3, 6, 9, 12},
            new int[] {0, 1, 2, 1, 2, 3, 0, 2, 3, 0, 1, 3}); // density 12/16
    assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(threeQuarters, gat));
    assertEquals(
        ComputePath.DENSE,
        PathChoice.AUTO.pathFor(threeQuarters, ScoreFunction.gatv2(0.2f, new float[] {1f})));
  }

  @Test
  void autoSendsLargeGraphsToTheSparsePathExceptDenseDotProductOnes() {
    int n = PathChoice.AUTO_DENSE_MAX_NODES + 1;
    int degree = n; // every pair: density 1 without being the complete-pattern type
    int[] offsets = new int[n + 1];
    int[] columns = new int[n * degree];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = (i + 1) * degree;
      for (int j = 0; j < degree; j++) {
        columns[i * degree + j] = j;
      }
    }
    CsrGraph full = CsrGraph.of(offsets, columns);
    ScoreFunction gat = ScoreFunction.additive(ScoreFunction.GAT_NEGATIVE_SLOPE);
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(full, gat));
    assertEquals(
        ComputePath.DENSE, PathChoice.AUTO.pathFor(full, ScoreFunction.scaledDotProduct()));
  }

  @Test
  void autoFallsBackToTheOtherKernelButExplicitPathsDoNot() throws IOException {
    AttentionModel base = TestModels.load(TestModels.resource("mixed.heed"));
    List<ComputePath> asked = new ArrayList<>();
    ReferenceAttentionKernel reference = new ReferenceAttentionKernel();
    AttentionModel onlySparse =
        base.withKernelSource(
            path -> {
              synchronized (asked) {
                asked.add(path);
              }
              if (path == ComputePath.DENSE) {
                throw new IllegalStateException("no attention kernel for the DENSE path");
              }
              return reference;
            });
    CsrGraph graph = TestModels.fixtureGraph();
    float[] x = TestModels.npyResource("features.npy").toFloats();
    float[] auto = onlySparse.forward(graph, x, PathChoice.AUTO, false).values();
    assertTrue(asked.contains(ComputePath.DENSE), "the fixture's full self-attention asks DENSE");
    float[] sparse = onlySparse.forward(graph, x, PathChoice.SPARSE, false).values();
    assertArrayEquals(sparse, auto, 0f);
    IllegalStateException e =
        assertThrows(
            IllegalStateException.class,
            () -> onlySparse.forward(graph, x, PathChoice.DENSE, false));
    assertTrue(e.getMessage().contains("DENSE"), e.getMessage());
  }

  /** A reference kernel that reports the path it was asked for. */
  private static AttentionKernel reporting(ComputePath path, AttentionKernel reference) {
    return new AttentionKernel() {
      @Override
      public ComputePath path() {
        return path;
      }

      @Override
      public String describe() {
        return "reference reporting " + path;
      }

      @Override
      public void attend(
          AttentionPattern pattern,
          ScoreFunction score,
          HeadShape shape,
          float[] query,
          float[] key,
          float[] value,
          float[] out,
          float[] weights) {
        reference.attend(pattern, score, shape, query, key, value, out, weights);
      }
    };
  }

  @Test
  void layerRunsReportEachLayersPathIncludingTheAutoFallback() throws IOException {
    AttentionModel base = TestModels.load(TestModels.resource("mixed.heed"));
    ReferenceAttentionKernel reference = new ReferenceAttentionKernel();
    AttentionModel both = base.withKernelSource(path -> reporting(path, reference));
    CsrGraph graph = TestModels.fixtureGraph();
    float[] x = TestModels.npyResource("features.npy").toFloats();
    List<LayerRun> runs = both.forward(graph, x, PathChoice.AUTO, false).layerRuns();
    assertEquals(base.layers().size(), runs.size());
    for (int i = 0; i < runs.size(); i++) {
      Layer layer = base.layers().get(i);
      LayerRun run = runs.get(i);
      assertEquals(i, run.layerIndex());
      assertEquals(layer.name(), run.layerName());
      assertEquals(layer.kind(), run.kind());
      assertTrue(run.nanos() >= 0, run.toString());
      if (layer.attentionHeads() == 0) {
        assertTrue(run.path().isEmpty(), run.toString());
      } else {
        boolean complete = layer instanceof SelfAttentionLayer s && s.attendsToAllNodes();
        ComputePath expected =
            PathChoice.AUTO.pathFor(
                complete ? CompletePattern.of(graph.nodeCount()) : graph, scoreOf(layer));
        assertEquals(Optional.of(expected), run.path(), run.toString());
      }
    }
    assertTrue(
        runs.stream().anyMatch(r -> r.path().equals(Optional.of(ComputePath.DENSE))),
        "the fixture's full self-attention goes DENSE under AUTO");
    for (LayerRun run : both.forward(graph, x, PathChoice.SPARSE, false).layerRuns()) {
      assertTrue(run.path().isEmpty() || run.path().get() == ComputePath.SPARSE, run.toString());
    }
    AttentionModel onlySparse =
        base.withKernelSource(
            path -> {
              if (path == ComputePath.DENSE) {
                throw new IllegalStateException("no attention kernel for the DENSE path");
              }
              return reporting(path, reference);
            });
    for (LayerRun run : onlySparse.forward(graph, x, PathChoice.AUTO, false).layerRuns()) {
      assertTrue(
          run.path().isEmpty() || run.path().get() == ComputePath.SPARSE,
          "AUTO's fallback is reported: " + run);
    }
  }

  private static ScoreFunction scoreOf(Layer layer) {
    return layer instanceof GraphAttentionLayer g ? g.score() : ScoreFunction.scaledDotProduct();
  }
}
