package dev.heed.examples;

import dev.heed.model.AttentionModel;
import dev.heed.model.ModelFile;
import dev.heed.npy.NpyLimits;
import java.io.BufferedInputStream;
import java.io.FileNotFoundException;
import java.io.IOException;
import java.io.InputStream;
import java.nio.file.Path;
import java.util.Objects;

/**
 * Loads a model for the examples from a file, or from a class path resource when the location
 * starts with {@value #CLASSPATH_PREFIX} (as the demo model ships inside the {@code demo} jar).
 *
 * <pre>{@code
 * AttentionModel fromFile = ModelSource.load("models/risk.heed");
 * AttentionModel bundled = ModelSource.load(ModelSource.DEMO_MODEL);
 * }</pre>
 *
 * <p>Thread safety: stateless.
 */
public final class ModelSource {

  /** Prefix of a location that names a class path resource instead of a file. */
  public static final String CLASSPATH_PREFIX = "classpath:";

  /** Where the bundled demo model lives: a resource of the {@code demo} jar. */
  public static final String DEMO_MODEL = CLASSPATH_PREFIX + "/dev/heed/demo/payments-demo.heed";

  private ModelSource() {}

  /**
   * Reads and validates a model.
   *
   * @param location a file path, or {@value #CLASSPATH_PREFIX} followed by an absolute resource
   *     name such as {@code /dev/heed/demo/payments-demo.heed}
   * @return the model
   * @throws FileNotFoundException if the resource is not on the class path
   * @throws dev.heed.model.ModelFormatException if the file is not a valid Heed model
   * @throws IOException if the file cannot be read
   */
  public static AttentionModel load(String location) throws IOException {
    Objects.requireNonNull(location, "location");
    if (!location.startsWith(CLASSPATH_PREFIX)) {
      return ModelFile.read(Path.of(location));
    }
    String resource = location.substring(CLASSPATH_PREFIX.length());
    try (InputStream in = ModelSource.class.getResourceAsStream(resource)) {
      if (in == null) {
        throw new FileNotFoundException(
            "no class path resource '"
                + resource
                + "'; put the jar that holds it on the class path, or pass a model file path");
      }
      return ModelFile.read(new BufferedInputStream(in), resource, NpyLimits.defaults());
    }
  }
}
