package dev.heed.integration;

import static dev.heed.live.LiveScoringChecks.assertMatches;
import static dev.heed.live.LiveScoringChecks.fullPass;
import static dev.heed.live.LiveScoringChecks.randomBatch;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.demo.DemoGraph;
import dev.heed.demo.PaymentsNetwork;
import dev.heed.demo.PaymentsNetworkGenerator;
import dev.heed.live.IncrementalScorer;
import dev.heed.live.LiveScoringChecks;
import dev.heed.live.LiveSnapshot;
import dev.heed.live.RefreshOptions;
import dev.heed.live.RefreshReport;
import dev.heed.live.UpdateBatch;
import dev.heed.live.VersionedGraph;
import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.PathChoice;
import dev.heed.npy.NpyLimits;
import java.io.IOException;
import java.io.InputStream;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/**
 * The demo model kept fresh on a live slice of the demo payments network, on the sparse path alone:
 * the first accounts and most transfers among them are loaded, then the remaining transfers among
 * them are streamed in small batches mixed with seeded random updates (edges inserted and deleted,
 * accounts added with and without features, features changed); after every batch the refreshed
 * scores equal a from-scratch full pass over the same snapshot (1e-5 norm-wise relative error per
 * node), and the demo's graph conventions (symmetrised, self-loops) are those of the live graph.
 */
class LiveDemoSliceTest {

  private static final int ACCOUNTS = 1500;

  @Test
  void theDemoModelStaysExactOnALiveSliceOfTheDemoNetwork() throws IOException {
    PaymentsNetwork network = PaymentsNetworkGenerator.bundledDemo().generate();
    AttentionModel model;
    try (InputStream in =
        LiveDemoSliceTest.class.getResourceAsStream("/dev/heed/demo/payments-demo.heed")) {
      model = ModelFile.read(in, "payments-demo.heed", NpyLimits.defaults());
    }
    int f = network.featureNames().size();
    float[] features = Arrays.copyOf(network.features(), ACCOUNTS * f);
    List<int[]> inside = new ArrayList<>();
    int[] from = network.transferSources();
    int[] to = network.transferTargets();
    for (int t = 0; t < from.length; t++) {
      if (from[t] < ACCOUNTS && to[t] < ACCOUNTS) {
        inside.add(new int[] {from[t], to[t]});
      }
    }
    int loaded = inside.size() * 4 / 5;
    int[] s = new int[loaded];
    int[] d = new int[loaded];
    for (int k = 0; k < loaded; k++) {
      s[k] = inside.get(k)[0];
      d[k] = inside.get(k)[1];
    }
    int hops = 0;
    for (var layer : model.layers()) {
      hops += layer.kind().equals("graph_attention") ? 1 : 0;
    }
    SplittableRandom random = new SplittableRandom(1500L);
    try (VersionedGraph<Integer> graph =
            LiveScoringChecks.load(ACCOUNTS, s, d, features, f, DemoGraph.DIRECTION);
        IncrementalScorer<Integer> scorer =
            IncrementalScorer.create(
                model, graph, RefreshOptions.defaults().withPath(PathChoice.SPARSE))) {
      int next = loaded;
      for (int b = 0; b < 30; b++) {
        if (b % 2 == 0 && next < inside.size()) {
          UpdateBatch<Integer> batch = graph.newBatch();
          for (int k = 0; k < 8 && next < inside.size(); k++, next++) {
            batch.addEdge(inside.get(next)[0], inside.get(next)[1]);
          }
          graph.apply(batch);
        } else {
          randomBatch(graph, random, 1 + random.nextInt(6));
        }
        RefreshReport report = scorer.refresh();
        assertTrue(report.isComplete(), report.toString());
        LiveSnapshot<Integer> now = graph.snapshot();
        assertEquals(now.version(), report.version());
        assertMatches(
            scorer, fullPass(model, now, PathChoice.SPARSE, hops), now.version(), "batch " + b);
      }
    }
  }
}
