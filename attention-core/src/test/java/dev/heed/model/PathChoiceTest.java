package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.PathCosts;
import dev.heed.attention.PathEstimate;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.SyntheticCosts;
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

  /** Dense 2e-9·n²·H, sparse 8e-9·E·H: the sparse path is faster below density 0.25. */
  private static final PathCosts QUARTER = SyntheticCosts.linear(0, 2e-9, 0, 8e-9);

  /** Dense far cheaper than sparse: AUTO goes dense for every attention layer. */
  private static final PathCosts DENSE_CHEAP = SyntheticCosts.linear(0, 1e-15, 1, 1);

  @Test
  void autoTakesThePathTheCostModelPredictsFaster() {
    ScoreFunction dot = ScoreFunction.scaledDotProduct();
    HeadShape shape = new HeadShape(4, 16, 16);
    CsrGraph chain = CsrGraph.of(new int[] {0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, new int[] {0});
    // density 0.01
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(chain, dot, shape, 1, QUARTER));
    CsrGraph threeQuarters =
        CsrGraph.of(
            new int[] {0, 3, 6, 9, 12},
            new int[] {0, 1, 2, 1, 2, 3, 0, 2, 3, 0, 1, 3}); // density 12/16
    assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(threeQuarters, dot, shape, 1, QUARTER));
    assertEquals(
        ComputePath.DENSE, PathChoice.AUTO.pathFor(CompletePattern.of(3), dot, shape, 1, QUARTER));
    // explicit paths ignore the model, and need none
    assertEquals(ComputePath.SPARSE, PathChoice.SPARSE.pathFor(threeQuarters, dot, shape, 1, null));
    assertEquals(ComputePath.DENSE, PathChoice.DENSE.pathFor(chain, dot, shape, 1, null));
    assertThrows(
        NullPointerException.class, () -> PathChoice.AUTO.pathFor(chain, dot, shape, 1, null));
  }

  // The dense back end's start-up (ND4J, about 1.5 s once per JVM) is charged to the dense path
  // until it has started: AUTO then goes dense only for a call predicted to save more than that
  // (a one-time cost charged to the call that would pay it; the rule is documented in PathChoice).
  @Test
  void autoChargesTheDenseStartUpUntilTheBackEndHasStarted() throws IOException {
    PathEstimate slightlyDense = new PathEstimate(1e-5, 2e-5);
    assertEquals(ComputePath.SPARSE, PathChoice.autoPath(slightlyDense, 1.5));
    assertEquals(ComputePath.DENSE, PathChoice.autoPath(slightlyDense, 0));
    assertEquals(ComputePath.DENSE, PathChoice.autoPath(new PathEstimate(0.1, 2.0), 1.5));
    assertEquals(ComputePath.SPARSE, PathChoice.autoPath(new PathEstimate(0.1, 1.6), 1.5));
    assertEquals(ComputePath.SPARSE, PathChoice.autoPath(new PathEstimate(2.0, 0.1), 0));
    assertEquals(ComputePath.SPARSE, PathChoice.autoPath(new PathEstimate(1.0, 1.0), 0));

    AttentionModel base = TestModels.load(TestModels.resource("mixed.heed"));
    ReferenceAttentionKernel reference = new ReferenceAttentionKernel();
    CsrGraph graph = TestModels.fixtureGraph();
    float[] x = TestModels.npyResource("features.npy").toFloats();
    List<ComputePath> asked = new ArrayList<>();
    for (double startUp : new double[] {1.5, 0}) {
      asked.clear();
      KernelSource source =
          new KernelSource() {
            @Override
            public AttentionKernel kernel(ComputePath path) {
              asked.add(path);
              return reporting(path, reference);
            }

            @Override
            public double startUpSeconds(ComputePath path) {
              return path == ComputePath.DENSE ? startUp : 0;
            }
          };
      // the dense path predicted microseconds faster on every attention layer
      AttentionModel model =
          base.withPathCosts(SyntheticCosts.linear(0, 1e-15, 1e-5, 1e-12)).withKernelSource(source);
      for (LayerRun run : model.forward(graph, x, PathChoice.AUTO, false).layerRuns()) {
        if (run.estimate().isEmpty()) {
          continue;
        }
        assertEquals(ComputePath.DENSE, run.estimate().get().faster(), run.toString());
        ComputePath want = startUp > 0 ? ComputePath.SPARSE : ComputePath.DENSE;
        assertEquals(Optional.of(want), run.path(), "start-up " + startUp + ": " + run);
      }
      assertTrue(
          startUp > 0 ? !asked.contains(ComputePath.DENSE) : asked.contains(ComputePath.DENSE),
          "start-up " + startUp + ", kernels asked for: " + asked);
    }
  }

  @Test
  void autoFallsBackToTheOtherKernelButExplicitPathsDoNot() throws IOException {
    AttentionModel base = TestModels.load(TestModels.resource("mixed.heed"));
    List<ComputePath> asked = new ArrayList<>();
    ReferenceAttentionKernel reference = new ReferenceAttentionKernel();
    AttentionModel onlySparse =
        base.withPathCosts(DENSE_CHEAP)
            .withKernelSource(
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
    assertTrue(asked.contains(ComputePath.DENSE), "AUTO asks DENSE where it is predicted faster");
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
    CsrGraph graph = TestModels.fixtureGraph();
    // sparse faster up to halfway between the fixture graph's density and the complete pattern's
    double threshold = (graph.density() + 1) / 2;
    AttentionModel both =
        base.withPathCosts(SyntheticCosts.linear(0, 1e-8 * threshold, 0, 1e-8))
            .withKernelSource(path -> reporting(path, reference));
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
        PathEstimate estimate = run.estimate().orElseThrow();
        assertEquals(Optional.of(estimate.faster()), run.path(), run.toString());
        assertEquals(
            complete ? ComputePath.DENSE : ComputePath.SPARSE, estimate.faster(), run.toString());
        assertTrue(run.toString().contains("AUTO predicted dense"), run.toString());
      }
    }
    assertTrue(
        runs.stream().anyMatch(r -> r.path().equals(Optional.of(ComputePath.DENSE))),
        "the fixture's full self-attention (density 1) goes DENSE under AUTO");
    assertTrue(
        runs.stream().anyMatch(r -> r.path().equals(Optional.of(ComputePath.SPARSE))),
        "the fixture's graph layers go SPARSE under AUTO");
    for (LayerRun run : both.forward(graph, x, PathChoice.SPARSE, false).layerRuns()) {
      assertTrue(run.path().isEmpty() || run.path().get() == ComputePath.SPARSE, run.toString());
      assertTrue(run.estimate().isEmpty(), "an explicit path has no prediction: " + run);
    }
    AttentionModel onlySparse =
        base.withPathCosts(DENSE_CHEAP)
            .withKernelSource(
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
}
