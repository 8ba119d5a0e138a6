package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import java.util.ArrayList;
import java.util.List;
import java.util.Locale;

/**
 * Whether a sweep's timings can be trusted: the load average at the start and its peak, the points
 * whose timed calls still spread by more than {@value #MAX_SPREAD} of their median, and how flat
 * the dense path's line is at each n (its cost does not depend on density, so a line that is not
 * flat within {@value #MAX_DENSE_RANGE} measured the machine, not the kernel).
 *
 * <p>The machine is flagged noisy when the load average at the start or its peak exceeds half the
 * processors plus the kernel threads (other work was running), when more than 10 % of the points
 * spread by more than {@value #MAX_SPREAD}, or when a dense line is not flat.
 *
 * <p>Thread safety: immutable.
 */
public final class NoiseCheck {

  /** Highest spread {@code (max − min) / median} of a trustworthy point: {@value}. */
  public static final double MAX_SPREAD = 0.25;

  /** Largest {@code max / min − 1} of one dense line across densities: {@value}. */
  public static final double MAX_DENSE_RANGE = 0.20;

  private final double startLoad;
  private final double peakLoad;
  private final int measured;
  private final int highSpread;
  private final double worstSpread;
  private final List<String> denseLines;
  private final boolean denseFlat;
  private final boolean loaded;

  private NoiseCheck(
      double startLoad,
      double peakLoad,
      int measured,
      int highSpread,
      double worstSpread,
      List<String> denseLines,
      boolean denseFlat,
      boolean loaded) {
    this.startLoad = startLoad;
    this.peakLoad = peakLoad;
    this.measured = measured;
    this.highSpread = highSpread;
    this.worstSpread = worstSpread;
    this.denseLines = List.copyOf(denseLines);
    this.denseFlat = denseFlat;
    this.loaded = loaded;
  }

  /**
   * Checks a sweep.
   *
   * @param config the sweep
   * @param points its points (not modified)
   * @param startLoad the one-minute load average before the first point, or NaN
   * @param peakLoad its highest value during the sweep, or NaN
   * @return the check
   */
  public static NoiseCheck of(
      SweepConfig config, List<SweepPoint> points, double startLoad, double peakLoad) {
    int measured = 0;
    int high = 0;
    double worst = 0;
    for (SweepPoint p : points) {
      if (p.measured()) {
        measured++;
        double s = p.timing().relativeSpread();
        worst = Math.max(worst, s);
        if (s > MAX_SPREAD) {
          high++;
        }
      }
    }
    List<String> lines = new ArrayList<>();
    boolean flat = true;
    for (SweepScore score : config.scores()) {
      for (int n : config.nodeCounts()) {
        double min = Double.POSITIVE_INFINITY;
        double max = 0;
        int count = 0;
        for (SweepPoint p : points) {
          if (p.measured() && p.path() == ComputePath.DENSE && p.score() == score && p.n() == n) {
            double ms = p.timing().medianMillis();
            min = Math.min(min, ms);
            max = Math.max(max, ms);
            count++;
          }
        }
        if (count >= 2) {
          double range = max / min - 1;
          flat &= range <= MAX_DENSE_RANGE;
          lines.add(
              String.format(
                  Locale.ROOT,
                  "%s n=%d: dense %.3g..%.3g ms over %d densities (%+.0f %%)%s",
                  score.label(),
                  n,
                  min,
                  max,
                  count,
                  range * 100,
                  range <= MAX_DENSE_RANGE ? "" : " NOT FLAT"));
        }
      }
    }
    double busy = Runtime.getRuntime().availableProcessors() * 0.5 + config.threads();
    boolean loaded = startLoad > busy || peakLoad > busy;
    return new NoiseCheck(startLoad, peakLoad, measured, high, worst, lines, flat, loaded);
  }

  /**
   * Returns whether the timings should not be trusted (see the class description).
   *
   * @return true for a noisy machine
   */
  public boolean noisy() {
    return loaded || highSpread > 0.1 * measured || !denseFlat;
  }

  /**
   * Returns how many measured points spread by more than {@value #MAX_SPREAD}.
   *
   * @return the count
   */
  public int highSpreadPoints() {
    return highSpread;
  }

  /**
   * Returns whether every dense line is flat within {@value #MAX_DENSE_RANGE}.
   *
   * @return true if flat
   */
  public boolean denseFlat() {
    return denseFlat;
  }

  /**
   * Returns the report's lines.
   *
   * @return text, lines ending in {@code \n}
   */
  public String describe() {
    StringBuilder b = new StringBuilder();
    b.append(
        String.format(
            Locale.ROOT,
            "load average %.2f at the start, peak %.2f (%d processors); %d of %d points spread"
                + " by more than %.0f %% (worst %.0f %%)%n",
            startLoad,
            peakLoad,
            Runtime.getRuntime().availableProcessors(),
            highSpread,
            measured,
            MAX_SPREAD * 100,
            worstSpread * 100));
    for (String line : denseLines) {
      b.append("  ").append(line).append('\n');
    }
    if (noisy()) {
      b.append(
          "NOISY MACHINE: "
              + (loaded ? "other work was running (load average); " : "")
              + (highSpread > 0.1 * measured ? "many points spread widely; " : "")
              + (denseFlat ? "" : "a dense line is not flat; ")
              + "the timings, crossovers and the AUTO check are unreliable. Run again on an idle"
              + " machine.\n");
    }
    return b.toString();
  }
}
