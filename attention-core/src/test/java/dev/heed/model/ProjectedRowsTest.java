package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.CsrGraphBuilder;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * {@link GraphAttentionLayer#forwardProjectedRows}, the row-by-row attention over kept projections
 * that incremental scoring runs for the rows it recomputes: for GAT and GATv2 layers (bias, linear
 * and no residual, concatenated and averaged heads) over a seeded random graph, each chosen row
 * equals the float64 reference attention of the whole graph, finished by the layer (1e-5 norm-wise
 * relative error per row); a row whose scores overflow float32 gets the float64 attention of the
 * clamped scores; a non-finite kept projection is rejected by name.
 */
class ProjectedRowsTest {

  private static final double TOLERANCE = 1e-5;

  /** Local ids for a chunk: targets first, then each new source in row order. */
  private record Chunk(int m, int[] rows, int[] offsets, int[] columns) {}

  private static Chunk chunk(CsrGraph graph, int[] targets) {
    int n = graph.nodeCount();
    int[] localOf = new int[n];
    Arrays.fill(localOf, -1);
    int[] rows = new int[n];
    int count = 0;
    for (int t : targets) {
      localOf[t] = count;
      rows[count++] = t;
    }
    int[] offsets = new int[targets.length + 1];
    int[] columns = new int[(int) graph.entryCount()];
    int e = 0;
    for (int i = 0; i < targets.length; i++) {
      for (int p = graph.rowStart(targets[i]); p < graph.rowEnd(targets[i]); p++) {
        int u = graph.columns()[p];
        if (localOf[u] < 0) {
          localOf[u] = count;
          rows[count++] = u;
        }
        columns[e++] = localOf[u];
      }
      offsets[i + 1] = e;
    }
    return new Chunk(targets.length, rows, offsets, columns);
  }

  private static float[] gaussian(SplittableRandom r, int count) {
    float[] x = new float[count];
    for (int i = 0; i < x.length; i++) {
      x[i] = (float) r.nextGaussian();
    }
    return x;
  }

  private static void checkLayer(GraphAttentionLayer layer, long seed) {
    SplittableRandom r = new SplittableRandom(seed);
    int n = 70;
    int edges = 420;
    int[] src = new int[edges];
    int[] dst = new int[edges];
    for (int k = 0; k < edges; k++) {
      src[k] = r.nextInt(n);
      // a few hubs, and node 0 without sources
      dst[k] = 1 + (r.nextInt(3) == 0 ? r.nextInt(4) : r.nextInt(n - 1));
    }
    CsrGraph graph = CsrGraphBuilder.fromEdges(src, dst, n).build();
    int in = layer.inputWidth();
    float[] x = gaussian(r, n * in);
    Layer.AttentionInputs inputs = layer.prepareAttention(x, n, n);
    double[] reference =
        ReferenceAttention.attend(
                graph, inputs.score(), inputs.shape(), inputs.query(), inputs.key(), inputs.value())
            .out();
    float[] table = layer.project(x, n);
    int[] targets = {5, 0, 2, 41, 1, 3, 69, 17};
    Chunk c = chunk(graph, targets);
    float[] targetInput = new float[targets.length * in];
    for (int i = 0; i < targets.length; i++) {
      System.arraycopy(x, targets[i] * in, targetInput, i * in, in);
    }
    float[] actual =
        layer.forwardProjectedRows(table, c.rows(), c.m(), c.offsets(), c.columns(), targetInput);
    int hd = inputs.shape().valueWidth();
    float[] attended = new float[targets.length * hd];
    for (int i = 0; i < targets.length; i++) {
      for (int k = 0; k < hd; k++) {
        attended[i * hd + k] = (float) reference[targets[i] * hd + k];
      }
    }
    float[] expected = layer.finishAttention(targetInput, attended, targets.length);
    int w = layer.outputWidth();
    for (int i = 0; i < targets.length; i++) {
      double[] want = new double[w];
      for (int k = 0; k < w; k++) {
        want[k] = expected[i * w + k];
      }
      float[] got = Arrays.copyOfRange(actual, i * w, (i + 1) * w);
      double error = ReferenceAttention.relativeError(want, got);
      assertTrue(error < TOLERANCE, layer.name() + ", node " + targets[i] + ": error " + error);
    }
  }

  @Test
  void chosenRowsEqualTheReferenceAttentionOfTheWholeGraph() {
    AttentionModel model = RandomModels.gatGatv2Dense(31, 5, 4);
    checkLayer((GraphAttentionLayer) model.layers().get(0), 101);
    checkLayer((GraphAttentionLayer) model.layers().get(1), 102);
    AttentionModel other =
        RandomModels.start(32, 6)
            .graphAttention("g1", "gatv2", 3, 4, true, "elu", false, "linear")
            .graphAttention("g2", "gat", 2, 3, false, "identity", true, "none")
            .dense("out", 3, "identity")
            .softmax(3);
    checkLayer((GraphAttentionLayer) other.layers().get(0), 103);
    checkLayer((GraphAttentionLayer) other.layers().get(1), 104);
  }

  /** GAT, 1 head of width 2, identity activation: the output is the attention itself. */
  private static GraphAttentionLayer plainGat() {
    return GraphAttentionLayer.gat("plain", 2, 1, 2)
        .weight(new float[] {1, 0, 0, 1})
        .targetAttention(new float[] {1, 0})
        .sourceAttention(new float[] {0, 1})
        .build();
  }

  @Test
  void overflowingScoresGiveTheAttentionOfTheClampedScores() {
    GraphAttentionLayer layer = plainGat();
    // table rows: value (2), source term, target term
    float big = 3e38f;
    float[] table = {
      0.5f, -1.5f, 0f, big, // 0: the target, its target term near the float32 limit
      2f, 4f, big, 0f, // 1: score q + k overflows float32, clamped to MAX_VALUE
      -6f, 8f, big, 0f, // 2: the same clamped score
      100f, 100f, -5f, 0f, // 3: a score about 3e38 lower, weight 0
    };
    int[] rows = {0, 1, 2, 3};
    float[] out =
        layer.forwardProjectedRows(
            table, rows, 1, new int[] {0, 3}, new int[] {1, 2, 3}, new float[] {0f, 0f});
    assertArrayEquals(new float[] {-2f, 6f}, out, 1e-6f);
  }

  @Test
  void nonFiniteKeptProjectionIsRejectedByName() {
    GraphAttentionLayer layer = plainGat();
    float[] table = {
      0.5f, -1.5f, 0f, 0.25f, //
      Float.NaN, 4f, 1f, 0f,
    };
    IllegalArgumentException e =
        assertThrows(
            IllegalArgumentException.class,
            () ->
                layer.forwardProjectedRows(
                    table,
                    new int[] {0, 1},
                    1,
                    new int[] {0, 2},
                    new int[] {0, 1},
                    new float[] {0f, 0f}));
    assertTrue(
        e.getMessage().startsWith("layer 'plain': the kept projection of node row 1"),
        e.getMessage());
  }
}
