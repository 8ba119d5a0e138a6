package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.ReferenceAttention;
import dev.heed.graph.CsrGraph;
import java.io.IOException;
import java.util.List;
import org.junit.jupiter.api.Test;

/**
 * A model exported from Python with only NumPy (docs/export_model.py, via make_model_fixture.py
 * beside the fixture) reproduces the outputs of NumPy's float64 forward pass, which evaluates the
 * published equations: Veličković et al. 2018 eqs. 1–6 (GAT), Brody et al. 2022 (GATv2), Vaswani et
 * al. 2017 eqs. 1–2 and §3.2.2 (multi-head attention, feed-forward), Ba et al. 2016 (layer
 * normalisation), Clevert et al. 2016 (ELU). No Python runs at test time.
 */
class NumpyExportedModelTest {

  @Test
  void reproducesNumpyProbabilitiesAndAttention() throws IOException {
    AttentionModel model = TestModels.mixedFixture();
    CsrGraph graph = TestModels.fixtureGraph();
    float[] features = TestModels.npyResource("features.npy").toFloats();
    assertEquals(List.of("alpha", "beta", "gamma"), model.classLabels());
    assertEquals(5, model.inputFeatureCount());
    assertEquals(6, model.layers().size());

    ModelOutput out = model.forward(graph, features, PathChoice.SPARSE, true);

    double[] expected = TestModels.npyResource("expected_probabilities.npy").toDoubles();
    double error = ReferenceAttention.relativeError(expected, out.values());
    assertTrue(error < 1e-5, "probabilities differ from NumPy's float64 pass by " + error);

    // Attention weights: layer 0 (GAT, CSR entry order) and layer 2 (full self-attention).
    List<LayerAttention> attention = out.attention();
    assertEquals(5, attention.size(), "one record per attention layer");
    double[] gat1 = TestModels.npyResource("expected_attention_gat1.npy").toDoubles();
    LayerAttention a0 = attention.get(0);
    assertEquals("gat1", a0.layerName());
    float[] actual0 = new float[gat1.length];
    int at = 0;
    for (int i = 0; i < graph.nodeCount(); i++) {
      for (int t = 0; t < a0.sourceCount(i); t++) {
        for (int h = 0; h < a0.heads(); h++) {
          actual0[at++] = a0.weight(i, t, h);
        }
      }
    }
    assertTrue(ReferenceAttention.relativeError(gat1, actual0) < 1e-5, "gat1 attention");
    double[] full = TestModels.npyResource("expected_attention_full.npy").toDoubles();
    LayerAttention a2 = attention.get(2);
    assertEquals("full", a2.layerName());
    assertEquals(graph.nodeCount(), a2.sourceCount(0), "full self-attention sees every node");
    float[] actual2 = new float[full.length];
    at = 0;
    for (int i = 0; i < graph.nodeCount(); i++) {
      for (int t = 0; t < a2.sourceCount(i); t++) {
        for (int h = 0; h < a2.heads(); h++) {
          actual2[at++] = a2.weight(i, t, h);
        }
      }
    }
    assertTrue(ReferenceAttention.relativeError(full, actual2) < 1e-5, "full attention");
  }

  @Test
  void featuresAreNotModified() throws IOException {
    AttentionModel model = TestModels.mixedFixture();
    float[] features = TestModels.npyResource("features.npy").toFloats();
    float[] copy = features.clone();
    model.forward(TestModels.fixtureGraph(), features, PathChoice.AUTO, false);
    assertTrue(java.util.Arrays.equals(copy, features));
  }
}
