package dev.heed.cli;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.Locale;
import java.util.Random;
import org.junit.jupiter.api.Test;

/**
 * {@link SixDecimals} writes what {@code String.format(Locale.ROOT, "%.6f", value)} writes, for
 * random floats, values at and next to ties between two six-decimal results, and the special
 * values.
 */
class SixDecimalsTest {

  private static void check(float value) {
    assertEquals(
        String.format(Locale.ROOT, "%.6f", value),
        SixDecimals.of(value),
        () -> "value " + value + " (bits " + Integer.toHexString(Float.floatToRawIntBits(value)));
  }

  @Test
  void matchesTheFormatterOnRandomProbabilitiesAndWiderValues() {
    Random random = new Random(20261204L);
    for (int i = 0; i < 200_000; i++) {
      check(random.nextFloat());
      check((float) Math.pow(10, random.nextDouble() * 16 - 10));
      check(Float.intBitsToFloat(random.nextInt()));
    }
  }

  @Test
  void matchesTheFormatterAtAndNextToTies() {
    Random random = new Random(42L);
    for (int i = 0; i < 100_000; i++) {
      double tie = (random.nextInt(2_000_000_000) + 0.5) / 1e6 / (1 << random.nextInt(12));
      float near = (float) tie;
      check(near);
      check(Math.nextUp(near));
      check(Math.nextDown(near));
    }
    // values whose binary expansion ends exactly on a tie: multiples of 2^-7 = 0.0078125
    for (int k = 0; k < 4096; k++) {
      check(k / 128f);
      check(k / 1024f);
    }
  }

  @Test
  void matchesTheFormatterOnSpecialValues() {
    float[] values = {
      0f,
      -0f,
      1f,
      -1f,
      0.5f,
      1e-7f,
      5e-7f,
      4.9999997e-7f,
      Float.MIN_VALUE,
      Float.MIN_NORMAL,
      999_999.94f,
      999_999.9f,
      1e6f,
      Float.MAX_VALUE,
      -Float.MAX_VALUE,
      Float.NaN,
      Float.POSITIVE_INFINITY,
      Float.NEGATIVE_INFINITY,
      -1e-9f
    };
    for (float v : values) {
      check(v);
    }
  }
}
