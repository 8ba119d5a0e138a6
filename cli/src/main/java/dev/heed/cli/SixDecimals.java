package dev.heed.cli;

import java.util.Locale;

/**
 * Writes a float with six decimals, exactly as {@code String.format(Locale.ROOT, "%.6f", value)}
 * does, without a {@link java.util.Formatter} for the common case: a prediction file holds four
 * numbers per node, and {@code String.format} parses its pattern on every call: writing the demo's
 * 200,000 numbers that way cost about 0.6 s of a fresh JVM's CPU time (benchmarks/RESULTS.md,
 * "Start-up").
 *
 * <p>The fast path takes finite values in [+0, 10^6) that are not within 10^-9 of a tie between two
 * six-decimal results (in units of the last decimal: a fraction within 10^-3 of one half). There
 * the result does not depend on how the value is rounded (its exact binary value, or the shortest
 * decimal string that identifies it, half up or half even): the error of {@code value · 10^6} in
 * double is under 1.2·10^-4 units and the shortest decimal string differs from the value by under
 * 6·10^-5 units. Everything else (negative values, negative zero, NaN, infinities, large values,
 * near-ties) goes to {@code String.format} itself.
 *
 * <p>Thread safety: stateless.
 */
final class SixDecimals {

  private static final double SCALE = 1e6;
  private static final double LIMIT = 1e6;
  private static final double TIE_MARGIN = 1e-3;

  private SixDecimals() {}

  /** Appends {@code value} with six decimals to {@code out}; see the class comment. */
  static StringBuilder append(StringBuilder out, float value) {
    double d = value;
    if (Float.floatToRawIntBits(value) >= 0 && d < LIMIT) {
      double scaled = d * SCALE;
      double whole = Math.floor(scaled);
      double fraction = scaled - whole;
      if (Math.abs(fraction - 0.5) > TIE_MARGIN) {
        long units = (long) whole + (fraction > 0.5 ? 1 : 0);
        long integer = units / 1_000_000;
        int decimals = (int) (units - integer * 1_000_000);
        out.append(integer).append('.');
        for (int place = 100_000; place > decimals && place > 1; place /= 10) {
          out.append('0');
        }
        return out.append(decimals);
      }
    }
    return out.append(String.format(Locale.ROOT, "%.6f", value));
  }

  /** {@link #append} into a new string. */
  static String of(float value) {
    return append(new StringBuilder(16), value).toString();
  }
}
