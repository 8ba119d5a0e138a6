package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;

import java.time.Duration;
import org.junit.jupiter.api.Test;

/** Number formatting in the table, the CSV and the progress lines. */
class FormatsTest {

  @Test
  void csvNumbersArePlainAndShort() {
    assertEquals("0.003", Formats.csvNumber(0.003));
    assertEquals("1", Formats.csvNumber(1.0));
    assertEquals("268435000", Formats.csvNumber(268_435_456.0)); // 6 significant digits
    assertEquals("0.123457", Formats.csvNumber(0.1234567));
    assertEquals("", Formats.csvNumber(Double.NaN));
    assertEquals("", Formats.csvNumber(Double.POSITIVE_INFINITY));
  }

  @Test
  void csvTextIsQuotedPerRfc4180() {
    assertEquals("\"a, \"\"b\"\"\"", Formats.csvText("a, \"b\""));
  }

  @Test
  void percentagesKeepSmallDensitiesReadable() {
    assertEquals("0.1 %", Formats.percent(0.001));
    assertEquals("0.3 %", Formats.percent(0.003));
    assertEquals("2.3 %", Formats.percent(0.0231));
    assertEquals("30 %", Formats.percent(0.3));
    assertEquals("100 %", Formats.percent(1.0));
  }

  @Test
  void durations() {
    assertEquals("0:07", Formats.duration(Duration.ofSeconds(7)));
    assertEquals("12:05", Formats.duration(Duration.ofSeconds(725)));
    assertEquals("1:00:01", Formats.duration(Duration.ofSeconds(3601)));
  }
}
