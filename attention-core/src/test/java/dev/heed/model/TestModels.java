package dev.heed.model;

import dev.heed.attention.AttentionKernel;
import dev.heed.attention.ReferenceAttentionKernel;
import dev.heed.graph.CsrGraph;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyLimits;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.util.Map;

/** Test helpers for models: fixtures, and a way to run models on the float64 reference kernel. */
public final class TestModels {

  private TestModels() {}

  /** Returns the same model with every path served by the float64 reference kernel. */
  public static AttentionModel withReferenceKernel(AttentionModel model) {
    AttentionKernel reference = new ReferenceAttentionKernel();
    return model.withKernelSource(path -> reference);
  }

  /** Returns the same model with every path served by {@code kernel}. */
  public static AttentionModel withKernel(AttentionModel model, AttentionKernel kernel) {
    return model.withKernelSource(path -> kernel);
  }

  /** Reads a resource of this package. */
  public static byte[] resource(String name) throws IOException {
    try (InputStream in = TestModels.class.getResourceAsStream(name)) {
      if (in == null) {
        throw new IOException("missing test resource " + name);
      }
      return in.readAllBytes();
    }
  }

  /** Reads a .npy resource of this package. */
  public static NpyArray npyResource(String name) throws IOException {
    return Npy.read(new ByteArrayInputStream(resource(name)), name, NpyLimits.defaults());
  }

  /** Loads a model from bytes. */
  public static AttentionModel load(byte[] bytes) throws IOException {
    return ModelFile.read(new ByteArrayInputStream(bytes), "test.heed", NpyLimits.defaults());
  }

  /** The NumPy-exported fixture model (see make_model_fixture.py), on the reference kernel. */
  public static AttentionModel mixedFixture() throws IOException {
    return withReferenceKernel(load(resource("mixed.heed")));
  }

  /** The fixture's graph. */
  public static CsrGraph fixtureGraph() throws IOException {
    return CsrGraph.of(
        npyResource("graph_row_offsets.npy").toInts(), npyResource("graph_columns.npy").toInts());
  }

  /** The fixture's raw archive contents, for building malformed variants. */
  public static NpzContents fixtureContents() throws IOException {
    return Npz.read(
        new ByteArrayInputStream(resource("mixed.heed")), "mixed.heed", NpyLimits.defaults());
  }

  /** Builds model-file bytes from a description and arrays. */
  public static byte[] modelBytes(byte[] description, Map<String, NpyArray> arrays) {
    return Npz.toBytes(Map.of(ModelFile.DESCRIPTION_ENTRY, description), arrays);
  }
}
