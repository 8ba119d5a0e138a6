package dev.heed.examples;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.model.ModelFormatException;
import java.io.FileNotFoundException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class ModelSourceTest {

  @Test
  void readsAModelFile(@TempDir Path dir) throws Exception {
    Path file = dir.resolve("model.heed");
    AttentionModel written = TestModel.build(11L);
    ModelFile.write(written, file);
    AttentionModel read = ModelSource.load(file.toString());
    assertEquals(written.classLabels(), read.classLabels());
    assertEquals(6, read.inputFeatureCount());
  }

  @Test
  void aMissingClassPathResourceIsNamed() {
    FileNotFoundException e =
        assertThrows(
            FileNotFoundException.class,
            () -> ModelSource.load("classpath:/dev/heed/examples/no-such-model.heed"));
    assertTrue(e.getMessage().contains("/dev/heed/examples/no-such-model.heed"), e.getMessage());
  }

  @Test
  void aFileThatIsNotAModelIsRefused(@TempDir Path dir) throws Exception {
    Path file = Files.writeString(dir.resolve("notes.heed"), "not a zip archive");
    assertThrows(ModelFormatException.class, () -> ModelSource.load(file.toString()));
  }
}
