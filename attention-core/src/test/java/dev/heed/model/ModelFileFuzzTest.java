package dev.heed.model;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;

import com.code_intelligence.jazzer.junit.FuzzTest;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyLimits;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.Map;

/**
 * Fuzz targets for model files (Jazzer): the whole zip archive, and the {@code model.json}
 * description alone over the fixture's tensors (so that mutations reach the layer checks rather
 * than stop at the zip's structure). Allowed outcomes: a model that passes its own check vectors,
 * or {@link ModelFormatException} with a message; anything else is a finding. Seeds and saved
 * findings: {@code ModelFileFuzzTestInputs/<method>/} in the test resources.
 */
class ModelFileFuzzTest {

  private static final Map<String, NpyArray> FIXTURE_TENSORS = fixtureTensors();

  private static Map<String, NpyArray> fixtureTensors() {
    try {
      return TestModels.fixtureContents().arrays();
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
  }

  @FuzzTest(maxDuration = "60s")
  void readModel(byte[] input) throws IOException {
    AttentionModel model;
    try {
      model = ModelFile.read(new ByteArrayInputStream(input), "fuzz.heed", NpyLimits.defaults());
    } catch (ModelFormatException e) {
      assertFalse(e.getMessage().isBlank(), "an error without a message");
      return;
    }
    assertConsistent(model);
  }

  @FuzzTest(maxDuration = "60s")
  void readDescription(byte[] input) throws IOException {
    AttentionModel model;
    try {
      model = ModelFile.fromParts(new String(input, StandardCharsets.UTF_8), FIXTURE_TENSORS);
    } catch (ModelFormatException e) {
      assertFalse(e.getMessage().isBlank(), "an error without a message");
      return;
    }
    assertConsistent(model);
  }

  /** A model that loads writes back to a file that loads to the same description. */
  private static void assertConsistent(AttentionModel model) throws IOException {
    byte[] written = ModelFile.toBytes(model);
    AttentionModel again =
        ModelFile.read(new ByteArrayInputStream(written), "round trip", NpyLimits.defaults());
    assertEquals(model.classLabels(), again.classLabels());
    assertEquals(model.layers().size(), again.layers().size());
  }
}
