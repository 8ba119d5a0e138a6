package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import com.fasterxml.jackson.databind.ObjectMapper;
import com.fasterxml.jackson.databind.node.ArrayNode;
import com.fasterxml.jackson.databind.node.ObjectNode;
import dev.heed.graph.DirectionPolicy;
import dev.heed.graph.DuplicatePolicy;
import dev.heed.graph.GraphPolicies;
import dev.heed.graph.SelfLoopPolicy;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyLimits;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.StandardCharsets;
import java.util.Arrays;
import java.util.LinkedHashMap;
import java.util.List;
import java.util.Map;
import java.util.Optional;
import java.util.function.Consumer;
import java.util.zip.CRC32;
import java.util.zip.ZipEntry;
import java.util.zip.ZipOutputStream;
import org.junit.jupiter.api.Test;

/**
 * The model file format as docs/model-format.md specifies it: round trips are bit-identical, and
 * every kind of malformed file gives a {@link ModelFormatException} naming the layer and tensor
 * (none crashes the JVM). Malformed files are built by editing the NumPy-exported fixture.
 */
class ModelFileTest {

  private static final ObjectMapper JSON = new ObjectMapper();

  @Test
  void readWriteReadIsBitIdentical() throws IOException {
    byte[] original = TestModels.resource("mixed.heed");
    AttentionModel first = TestModels.load(original);
    byte[] written = ModelFile.toBytes(first);
    AttentionModel second = TestModels.load(written);
    assertArrayEquals(written, ModelFile.toBytes(second), "rewriting must give identical bytes");
    for (int l = 0; l < first.layers().size(); l++) {
      assertEquals(first.layers().get(l).tensors(), second.layers().get(l).tensors());
    }
    // NumPy wrote float32 tensors; ours are the same arrays, bit for bit.
    NpzContents a = TestModels.fixtureContents();
    NpzContents b = Npz.read(new ByteArrayInputStream(written), "w", NpyLimits.defaults());
    assertEquals(a.arrays(), b.arrays());
    assertEquals(first.classLabels(), second.classLabels());
    assertEquals(first.featureNames(), second.featureNames());
  }

  @Test
  void graphPoliciesRoundTripAndAreOptional() throws IOException {
    AttentionModel plain = TestModels.load(TestModels.resource("mixed.heed"));
    GraphPolicies directed =
        new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.AS_GIVEN, DuplicatePolicy.REJECT);
    AttentionModel recorded = plain.withGraphPolicies(directed);
    AttentionModel back = TestModels.load(ModelFile.toBytes(recorded));
    assertEquals(Optional.of(directed), back.graphPolicies());
    String json =
        new String(
            Npz.read(
                    new ByteArrayInputStream(ModelFile.toBytes(recorded)),
                    "m",
                    NpyLimits.defaults())
                .otherEntry(ModelFile.DESCRIPTION_ENTRY)
                .orElseThrow(),
            java.nio.charset.StandardCharsets.UTF_8);
    assertEquals(
        "{\"direction\":\"keep\",\"self_loops\":\"as-given\",\"duplicates\":\"reject\"}",
        JSON.readTree(json).get("graph").toString());
    ObjectNode d = description();
    d.remove("graph");
    AttentionModel none =
        TestModels.load(TestModels.modelBytes(JSON.writeValueAsBytes(d), fixtureArrays()));
    assertEquals(Optional.empty(), none.graphPolicies());
    assertEquals(
        List.of("direction: keep instead of symmetrise", "duplicates: reject instead of merge"),
        GraphPolicies.UNDIRECTED_WITH_SELF_LOOPS.differences(
            new GraphPolicies(DirectionPolicy.KEEP, SelfLoopPolicy.ADD, DuplicatePolicy.REJECT)));
  }

  @Test
  void malformedGraphPoliciesAreNamed() throws IOException {
    assertMentions(
        broken(d -> d.put("graph", "symmetrise"), SAME_ARRAYS), "\"graph\" must be an object");
    assertMentions(
        broken(d -> graph(d).put("direction", "both"), SAME_ARRAYS),
        "\"graph\".\"direction\"",
        "'both' is not one of [keep, symmetrise]");
    assertMentions(
        broken(d -> graph(d).remove("self_loops"), SAME_ARRAYS), "needs a string \"self_loops\"");
    assertMentions(
        broken(d -> graph(d).put("selfloops", "add"), SAME_ARRAYS), "unknown key 'selfloops'");
  }

  private static ObjectNode graph(ObjectNode description) {
    ObjectNode g = description.putObject("graph");
    g.put("direction", "symmetrise");
    g.put("self_loops", "add");
    g.put("duplicates", "merge");
    return g;
  }

  private static Map<String, NpyArray> fixtureArrays() throws IOException {
    return new LinkedHashMap<>(TestModels.fixtureContents().arrays());
  }

  private static ObjectNode description() throws IOException {
    byte[] d = TestModels.fixtureContents().otherEntry(ModelFile.DESCRIPTION_ENTRY).orElseThrow();
    return (ObjectNode) JSON.readTree(d);
  }

  private static ObjectNode layer(ObjectNode description, int index) {
    return (ObjectNode) description.get("layers").get(index);
  }

  /** Loads the fixture after editing its description and arrays; returns the failure. */
  private static ModelFormatException broken(
      Consumer<ObjectNode> editDescription, Consumer<Map<String, NpyArray>> editArrays)
      throws IOException {
    ObjectNode d = description();
    editDescription.accept(d);
    Map<String, NpyArray> arrays = new LinkedHashMap<>(TestModels.fixtureContents().arrays());
    editArrays.accept(arrays);
    byte[] bytes = TestModels.modelBytes(JSON.writeValueAsBytes(d), arrays);
    return assertThrows(ModelFormatException.class, () -> TestModels.load(bytes));
  }

  private static void assertMentions(ModelFormatException e, String... fragments) {
    for (String f : fragments) {
      assertTrue(e.getMessage().contains(f), "expected '" + f + "' in: " + e.getMessage());
    }
  }

  private static final Consumer<ObjectNode> SAME = d -> {};
  private static final Consumer<Map<String, NpyArray>> SAME_ARRAYS = a -> {};

  @Test
  void wrongTypeShapeAndNonFiniteWeightsNameLayerAndTensor() throws IOException {
    ModelFormatException type =
        broken(SAME, a -> a.put("gat1.weight", NpyArray.ofInts(new int[5 * 12], 5, 12)));
    assertMentions(type, "layer 0 'gat1'", "tensor 'gat1.weight' (role weight)", "type <i4");
    assertEquals("gat1", type.layer().orElseThrow());
    assertEquals("gat1.weight", type.tensor().orElseThrow());

    ModelFormatException shape =
        broken(SAME, a -> a.put("full.key_weight", NpyArray.ofFloats(new float[12 * 11], 12, 11)));
    assertMentions(shape, "layer 2 'full'", "full.key_weight", "shape [12, 11], expected [12, 12]");

    float[] values = TestModels.fixtureContents().arrays().get("out.bias").toFloats();
    values[1] = Float.NaN;
    ModelFormatException nan = broken(SAME, a -> a.put("out.bias", NpyArray.ofFloats(values, 3)));
    assertMentions(nan, "layer 4 'out'", "out.bias", "NaN at flat index 1");

    double[] big = new double[3];
    big[2] = 1e300;
    ModelFormatException overflow =
        broken(SAME, a -> a.put("out.bias", NpyArray.ofDoubles(big, 3)));
    assertMentions(overflow, "out.bias", "beyond the float32 range");
  }

  @Test
  void structuralErrorsAreNamed() throws IOException {
    assertMentions(
        broken(d -> layer(d, 1).put("kind", "graph_convolution"), SAME_ARRAYS),
        "layer 1 'gat2'",
        "unknown layer kind");
    assertMentions(
        broken(d -> d.put("format_version", 2), SAME_ARRAYS), "format version 2 is newer");
    assertMentions(broken(d -> d.put("format", "other"), SAME_ARRAYS), "not a Heed model");
    assertMentions(
        broken(d -> layer(d, 0).put("residul", "none"), SAME_ARRAYS),
        "layer 0 'gat1'",
        "unknown key 'residul'");
    assertMentions(
        broken(d -> layer(d, 3).put("heads", 3), SAME_ARRAYS),
        "layer 3 'masked'",
        "masked.query_weight",
        "expected [12, 15]");
    assertMentions(
        broken(
            d -> {
              d.put("input_features", 6);
              d.remove("feature_names");
            },
            SAME_ARRAYS),
        "gat1.weight",
        "shape [5, 12], expected [6, 12]");
    assertMentions(
        broken(SAME, a -> a.remove("gat2.attention")),
        "layer 1 'gat2'",
        "tensor 'gat2.attention'",
        "no entry");
    assertMentions(
        broken(SAME, a -> a.put("stray", NpyArray.ofFloats(new float[1], 1))),
        "tensor 'stray' is not used");
    assertMentions(
        broken(d -> ((ArrayNode) d.get("class_labels")).add("delta"), SAME_ARRAYS),
        "3 outputs per node but there are 4 class labels");
    assertMentions(
        broken(d -> ((ArrayNode) d.get("layers")).remove(5), SAME_ARRAYS),
        "must be a softmax layer");
    assertMentions(
        broken(d -> layer(d, 0).put("activation", "tanh"), SAME_ARRAYS),
        "'activation' is \"tanh\"");
    assertMentions(
        broken(d -> layer(d, 1).put("name", "gat1"), SAME_ARRAYS), "duplicate layer name 'gat1'");
  }

  /** Writes a zip by hand so entries can carry any bytes (here: a big-endian .npy). */
  private static byte[] zipOf(Map<String, byte[]> entries) throws IOException {
    ByteArrayOutputStream buffer = new ByteArrayOutputStream();
    try (ZipOutputStream zip = new ZipOutputStream(buffer)) {
      for (Map.Entry<String, byte[]> e : entries.entrySet()) {
        zip.putNextEntry(new ZipEntry(e.getKey()));
        zip.write(e.getValue());
        zip.closeEntry();
      }
    }
    return buffer.toByteArray();
  }

  @Test
  void bigEndianTensorIsRejectedWithoutCrashing() throws IOException {
    Map<String, byte[]> entries = new LinkedHashMap<>();
    entries.put(ModelFile.DESCRIPTION_ENTRY, JSON.writeValueAsBytes(description()));
    for (Map.Entry<String, NpyArray> e : TestModels.fixtureContents().arrays().entrySet()) {
      byte[] npy = Npy.toBytes(e.getValue());
      if (e.getKey().equals("gat2.attention")) {
        String text = new String(npy, StandardCharsets.ISO_8859_1).replace("'<f4'", "'>f4'");
        npy = text.getBytes(StandardCharsets.ISO_8859_1);
      }
      entries.put(e.getKey() + ".npy", npy);
    }
    ModelFormatException e =
        assertThrows(ModelFormatException.class, () -> TestModels.load(zipOf(entries)));
    assertMentions(e, "gat2.attention.npy", "big-endian");
    assertEquals("gat2.attention", e.tensor().orElseThrow());
  }

  @Test
  void truncatedFilesNeverLoad() throws IOException {
    byte[] good = TestModels.resource("mixed.heed");
    for (int cut : new int[] {0, 3, 30, 100, 1000, good.length / 2, good.length - 30}) {
      byte[] truncated = Arrays.copyOf(good, cut);
      assertThrows(ModelFormatException.class, () -> TestModels.load(truncated), "cut " + cut);
    }
  }

  @Test
  void hugeDeclaredSizeIsRejectedBeforeReading() {
    byte[] name = ModelFile.DESCRIPTION_ENTRY.getBytes(StandardCharsets.UTF_8);
    byte[] data = "{}".getBytes(StandardCharsets.UTF_8);
    CRC32 crc = new CRC32();
    crc.update(data);
    ByteBuffer b =
        ByteBuffer.allocate(30 + name.length + data.length).order(ByteOrder.LITTLE_ENDIAN);
    b.putInt(0x04034b50).putShort((short) 20).putShort((short) 0).putShort((short) 0);
    b.putShort((short) 0).putShort((short) 0x21).putInt((int) crc.getValue());
    b.putInt(0x7FFF_FFF0).putInt(0x7FFF_FFF0); // declares ~2 GiB
    b.putShort((short) name.length).putShort((short) 0).put(name).put(data);
    ModelFormatException e =
        assertThrows(ModelFormatException.class, () -> TestModels.load(b.array()));
    assertMentions(e, "model.json", "declares");
  }

  @Test
  void missingOrInvalidDescription() throws IOException {
    byte[] none = Npz.toBytes(Map.of(), TestModels.fixtureContents().arrays());
    assertMentions(
        assertThrows(ModelFormatException.class, () -> TestModels.load(none)),
        "no 'model.json' entry");
    byte[] notJson =
        TestModels.modelBytes("{\"format\": ".getBytes(StandardCharsets.UTF_8), Map.of());
    assertMentions(
        assertThrows(ModelFormatException.class, () -> TestModels.load(notJson)), "not valid JSON");
  }

  /**
   * The check vectors catch what no shape check can: each square weight of the fixture ([12, 12])
   * stored transposed, as a stack that keeps linear weights as [out, in] would write it. The
   * expected probabilities come from docs/export_model.py's NumPy forward pass, an evaluation of
   * the equations in docs/model-format.md (Veličković et al. 2018, Brody et al. 2022, Vaswani et
   * al. 2017) written independently of Heed.
   */
  @Test
  void transposedSquareWeightFailsTheCheckVectors() throws IOException {
    for (String tensor :
        new String[] {
          "gat2.target_weight", "gat2.source_weight", "full.query_weight", "full.output_weight"
        }) {
      NpyArray weight = TestModels.fixtureContents().arrays().get(tensor);
      ModelFormatException e = broken(SAME, a -> a.put(tensor, TestModels.transposed(weight)));
      assertMentions(
          e,
          "test.heed: the model does not reproduce its check vectors",
          "largest deviation",
          "at check row",
          ", class '",
          "tolerance 1.0e-04",
          "docs/export_model.py",
          "[in, out]",
          "write W.T instead");
      assertTrue(e.layer().isEmpty() && e.tensor().isEmpty(), tensor);
    }
  }

  @Test
  void aModelWithoutCheckVectorsStillLoads() throws IOException {
    AttentionModel stripped =
        TestModels.load(
            TestModels.modelBytes(
                JSON.writeValueAsBytes(description().without(CheckEntries.KEY)),
                withoutChecks(TestModels.fixtureContents().arrays())));
    assertTrue(stripped.checks().isEmpty());
    byte[] written = ModelFile.toBytes(stripped);
    assertTrue(
        !new String(written, StandardCharsets.ISO_8859_1).contains("checks/"),
        "no check entries are written for a model without them");
    assertTrue(TestModels.load(written).checks().isEmpty());
  }

  private static Map<String, NpyArray> withoutChecks(Map<String, NpyArray> arrays) {
    Map<String, NpyArray> out = new LinkedHashMap<>(arrays);
    out.keySet().removeIf(k -> k.startsWith(CheckEntries.TENSOR_PREFIX));
    return out;
  }

  private static ObjectNode checks(ObjectNode description) {
    return (ObjectNode) description.get(CheckEntries.KEY);
  }

  @Test
  void malformedCheckEntriesNameTheTensor() throws IOException {
    Map<String, NpyArray> fixture = TestModels.fixtureContents().arrays();
    ModelFormatException shape =
        broken(SAME, a -> a.put("checks/features", NpyArray.ofFloats(new float[8 * 4], 8, 4)));
    assertMentions(
        shape,
        "test.heed: checks: tensor 'checks/features' (role features)",
        "shape [8, 4], expected [8, 5] (nodes × input_features)");
    assertEquals("checks/features", shape.tensor().orElseThrow());

    assertMentions(
        broken(
            SAME, a -> a.put("checks/probabilities", NpyArray.ofDoubles(new double[8 * 2], 8, 2))),
        "role probabilities",
        "expected [8, 3] (nodes × classes)");

    double[] p = fixture.get("checks/probabilities").toDoubles();
    p[3 * 3 + 1] = Double.NaN;
    ModelFormatException nan =
        broken(SAME, a -> a.put("checks/probabilities", NpyArray.ofDoubles(p, 8, 3)));
    assertMentions(nan, "tensor 'checks/probabilities'", "NaN at row 3, column 1");
    assertEquals("checks/probabilities", nan.tensor().orElseThrow());

    float[] x = fixture.get("checks/features").toFloats();
    x[2 * 5 + 4] = Float.POSITIVE_INFINITY;
    assertMentions(
        broken(SAME, a -> a.put("checks/features", NpyArray.ofFloats(x, 8, 5))),
        "tensor 'checks/features'",
        "Infinity at row 2, column 4");

    double[] scores = fixture.get("checks/probabilities").toDoubles();
    scores[0] = 0.9;
    scores[1] = 0.9;
    assertMentions(
        broken(SAME, a -> a.put("checks/probabilities", NpyArray.ofDoubles(scores, 8, 3))),
        "row 0 sums to",
        "not scores");

    assertMentions(
        broken(SAME, a -> a.put("checks/row_offsets", NpyArray.ofFloats(new float[9], 9))),
        "tensor 'checks/row_offsets' (role row_offsets)",
        "type <f4; expected '<i4' or '<i8'");
    int[] columns = fixture.get("checks/columns").toInts();
    columns[columns.length - 1] = 8;
    assertMentions(
        broken(SAME, a -> a.put("checks/columns", NpyArray.ofInts(columns, columns.length))),
        "not a CSR graph",
        "column index out of range in row 7");
    assertMentions(
        broken(SAME, a -> a.put("checks/row_offsets", NpyArray.ofInts(new int[300], 300))),
        "a check graph needs 1..256 nodes, got 299");
    assertMentions(broken(SAME, a -> a.remove("checks/columns")), "no entry 'checks/columns.npy'");
    assertMentions(
        broken(d -> ((ObjectNode) checks(d).get("tensors")).remove("columns"), SAME_ARRAYS),
        "tensor role 'columns' must name a tensor");
    assertMentions(
        broken(
            d -> ((ObjectNode) checks(d).get("tensors")).put("features", "gat1.weight"),
            a -> a.remove("checks/features")),
        "tensor 'gat1.weight' (role features) is used elsewhere too");
    assertMentions(
        broken(d -> checks(d).put("tolerence", 1e-4), SAME_ARRAYS),
        "checks: unknown key 'tolerence'");
    assertMentions(
        broken(d -> checks(d).put("tolerance", 0.5), SAME_ARRAYS),
        "tolerance must be a number in (0, 0.01], got 0.5");
    assertMentions(
        broken(d -> d.remove(CheckEntries.KEY), SAME_ARRAYS),
        "tensor 'checks/row_offsets' is not used by any layer");
  }

  /** Moving one expected probability by 6 × the tolerance is caught, at that row and class. */
  @Test
  void aDeviationIsReportedAtItsRowAndClass() throws IOException {
    double[] p = TestModels.fixtureContents().arrays().get("checks/probabilities").toDoubles();
    p[5 * 3] -= 3e-4;
    p[5 * 3 + 1] += 6e-4;
    p[5 * 3 + 2] -= 3e-4;
    ModelFormatException e =
        broken(SAME, a -> a.put("checks/probabilities", NpyArray.ofDoubles(p, 8, 3)));
    assertMentions(e, "largest deviation 6.0", "at check row 5, class 'beta'");
  }

  @Test
  void buildsFromPartsInMemoryWithTheSameValidation() throws IOException {
    NpzContents contents = TestModels.fixtureContents();
    String description =
        new String(
            contents.otherEntry(ModelFile.DESCRIPTION_ENTRY).orElseThrow(), StandardCharsets.UTF_8);
    AttentionModel model = ModelFile.fromParts(description, contents.arrays());
    assertArrayEquals(
        ModelFile.toBytes(TestModels.load(TestModels.resource("mixed.heed"))),
        ModelFile.toBytes(model));
    Map<String, NpyArray> missing = new LinkedHashMap<>(contents.arrays());
    missing.remove("out.weight");
    ModelFormatException e =
        assertThrows(ModelFormatException.class, () -> ModelFile.fromParts(description, missing));
    assertMentions(e, "layer 4 'out'", "out.weight");
  }
}
