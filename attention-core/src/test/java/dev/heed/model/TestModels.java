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

  /**
   * Returns a square [n, n] tensor with rows and columns swapped, as float32: a weight as a stack
   * that keeps linear weights as [out, in] would store it.
   */
  public static NpyArray transposed(NpyArray square) {
    int n = square.dimension(0);
    if (square.rank() != 2 || square.dimension(1) != n) {
      throw new IllegalArgumentException("not a square matrix: " + square);
    }
    float[] w = square.toFloats();
    float[] t = new float[w.length];
    for (int r = 0; r < n; r++) {
      for (int c = 0; c < n; c++) {
        t[c * n + r] = w[r * n + c];
      }
    }
    return NpyArray.ofFloats(t, n, n);
  }

  /** Returns model-file bytes with one square tensor transposed (see {@link #transposed}). */
  public static byte[] withTransposed(byte[] modelFile, String tensor) throws IOException {
    NpzContents contents =
        Npz.read(new ByteArrayInputStream(modelFile), "model", NpyLimits.defaults());
    Map<String, NpyArray> arrays = new java.util.LinkedHashMap<>(contents.arrays());
    arrays.put(tensor, transposed(arrays.get(tensor)));
    return modelBytes(contents.otherEntry(ModelFile.DESCRIPTION_ENTRY).orElseThrow(), arrays);
  }

  /** Builds model-file bytes from a description and arrays. */
  public static byte[] modelBytes(byte[] description, Map<String, NpyArray> arrays) {
    return Npz.toBytes(Map.of(ModelFile.DESCRIPTION_ENTRY, description), arrays);
  }
}
