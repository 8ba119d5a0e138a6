package dev.heed.bench.crossover;

import java.math.BigDecimal;
import java.math.MathContext;
import java.time.Duration;
import java.util.Locale;

/** Number formatting shared by the report, the CSV and the progress lines; package-private. */
final class Formats {

  private Formats() {}

  /** A fraction as a percentage with enough digits for small densities: 0.001 → "0.1 %". */
  static String percent(double fraction) {
    double p = fraction * 100;
    if (p >= 10) {
      return String.format(Locale.ROOT, "%.0f %%", p);
    }
    String text = String.format(Locale.ROOT, p >= 1 ? "%.1f" : "%.2g", p);
    if (text.contains(".") && !text.contains("e")) {
      text = text.replaceAll("0+$", "").replaceAll("\\.$", "");
    }
    return text + " %";
  }

  /** Milliseconds with three significant digits. */
  static String millis(double ms) {
    if (ms >= 100) {
      return String.format(Locale.ROOT, "%.0f", ms);
    }
    if (ms >= 10) {
      return String.format(Locale.ROOT, "%.1f", ms);
    }
    if (ms >= 1) {
      return String.format(Locale.ROOT, "%.2f", ms);
    }
    return String.format(Locale.ROOT, "%.3f", ms);
  }

  /** A duration as m:ss or h:mm:ss. */
  static String duration(Duration d) {
    long s = Math.max(0, d.toSeconds());
    if (s >= 3600) {
      return String.format(Locale.ROOT, "%d:%02d:%02d", s / 3600, (s / 60) % 60, s % 60);
    }
    return String.format(Locale.ROOT, "%d:%02d", s / 60, s % 60);
  }

  /**
   * A plain number for the CSV: empty for NaN or an infinity, otherwise rounded to 6 significant
   * digits without trailing zeros or an exponent (0.003, 12.3456).
   */
  static String csvNumber(double v) {
    if (!Double.isFinite(v)) {
      return "";
    }
    return new BigDecimal(v).round(new MathContext(6)).stripTrailingZeros().toPlainString();
  }

  /** Quotes a CSV field (RFC 4180: enclose in quotes, double inner quotes). */
  static String csvText(String s) {
    return "\"" + s.replace("\"", "\"\"") + "\"";
  }
}
