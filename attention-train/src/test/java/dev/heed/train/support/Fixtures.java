package dev.heed.train.support;

import java.io.BufferedReader;
import java.io.IOException;
import java.io.InputStream;
import java.io.InputStreamReader;
import java.io.UncheckedIOException;
import java.nio.charset.StandardCharsets;
import java.util.ArrayList;
import java.util.List;

/** Reads the CSV fixtures under src/test/resources: '#' lines are comments, then a header. */
public final class Fixtures {

  private Fixtures() {}

  /** Returns the data rows of a CSV resource, split on commas, without comments and header. */
  public static List<String[]> csv(String resource) {
    InputStream in = Fixtures.class.getResourceAsStream(resource);
    if (in == null) {
      throw new IllegalStateException("test resource " + resource + " is missing");
    }
    List<String[]> rows = new ArrayList<>();
    try (BufferedReader r = new BufferedReader(new InputStreamReader(in, StandardCharsets.UTF_8))) {
      boolean header = true;
      for (String line = r.readLine(); line != null; line = r.readLine()) {
        if (line.startsWith("#") || line.isBlank()) {
          continue;
        }
        if (header) {
          header = false;
          continue;
        }
        rows.add(line.split(",", -1));
      }
    } catch (IOException e) {
      throw new UncheckedIOException(e);
    }
    return rows;
  }
}
