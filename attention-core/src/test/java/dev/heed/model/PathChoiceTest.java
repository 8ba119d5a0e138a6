package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ComputePath;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.util.ArrayList;
import java.util.List;
import org.junit.jupiter.api.Test;

/** The documented AUTO rule, its fallback, and explicit paths that fail when absent. */
class PathChoiceTest {

  @Test
  void autoRuleFollowsPatternKindSizeAndDensity() {
    assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(CompletePattern.of(100_000)));
    CsrGraph selfLoops = CsrGraph.of(new int[] {0, 1, 2, 3, 4}, new int[] {0, 1, 2, 3});
    assertEquals(ComputePath.DENSE, PathChoice.AUTO.pathFor(selfLoops)); // n = 4, density 4/16
    CsrGraph chain = CsrGraph.of(new int[] {0, 1, 1, 1, 1, 1, 1, 1, 1, 1, 1}, new int[] {0});
    assertEquals(ComputePath.SPARSE, PathChoice.AUTO.pathFor(chain)); // density 0.01
    assertEquals(ComputePath.SPARSE, PathChoice.SPARSE.pathFor(CompletePattern.of(3)));
    assertEquals(ComputePath.DENSE, PathChoice.DENSE.pathFor(chain));
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
}
