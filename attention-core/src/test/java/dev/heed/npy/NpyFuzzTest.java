package dev.heed.npy;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertFalse;

import com.code_intelligence.jazzer.junit.FuzzTest;
import java.io.ByteArrayInputStream;
import java.io.IOException;
import java.util.Map;

/**
 * Fuzz targets for the {@code .npy} and {@code .npz} readers (Jazzer, coverage-guided). Allowed
 * outcomes: an array that re-encodes to an equal array, or {@link NpyFormatException} with a
 * message; any other exception or error is a finding.
 *
 * <p>In the default test run these replay the seeds and every saved finding under {@code
 * NpyFuzzTestInputs/<method>/} in the test resources (Jazzer's regression mode); {@code
 * JAZZER_FUZZ=1} fuzzes one target for its {@code maxDuration} (see docs/reliability.md).
 */
class NpyFuzzTest {

  private static final NpyLimits LIMITS = NpyLimits.defaults();

  @FuzzTest(maxDuration = "60s")
  void readNpy(byte[] input) throws IOException {
    NpyArray array;
    try {
      array = Npy.read(new ByteArrayInputStream(input), "fuzz.npy", LIMITS);
    } catch (NpyFormatException e) {
      assertFalse(e.getMessage().isBlank(), "an error without a message");
      return;
    }
    assertRoundTrip(array);
  }

  @FuzzTest(maxDuration = "60s")
  void readNpz(byte[] input) throws IOException {
    NpzContents contents;
    try {
      contents = Npz.read(new ByteArrayInputStream(input), "fuzz.npz", LIMITS);
    } catch (NpyFormatException e) {
      assertFalse(e.getMessage().isBlank(), "an error without a message");
      return;
    }
    for (Map.Entry<String, NpyArray> e : contents.arrays().entrySet()) {
      assertRoundTrip(e.getValue());
    }
  }

  /** What was read must be what it says: shape, element count and data agree. */
  private static void assertRoundTrip(NpyArray array) throws IOException {
    long count = 1;
    for (int d : array.shape()) {
      count *= d;
    }
    assertEquals(count, array.elementCount());
    assertEquals(count * array.dataType().byteWidth(), array.rawData().length);
    NpyArray again = Npy.read(new ByteArrayInputStream(Npy.toBytes(array)), "round trip", LIMITS);
    assertArrayEquals(array.shape(), again.shape());
    assertEquals(array, again);
  }
}
