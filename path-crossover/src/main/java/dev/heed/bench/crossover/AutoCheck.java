package dev.heed.bench.crossover;

import dev.heed.attention.ComputePath;
import dev.heed.attention.HeadShape;
import dev.heed.attention.PathCosts;
import dev.heed.attention.PathEstimate;
import java.util.ArrayList;
import java.util.HashMap;
import java.util.List;
import java.util.Locale;
import java.util.Map;
import java.util.Objects;

/**
 * How well {@code PathChoice.AUTO} would have chosen over a sweep: at every point where both paths
 * were timed, the path the cost model predicts faster is a hit if its measured median is at most
 * {@value #TOLERANCE} times the faster path's (1.10: within 10 %).
 *
 * <p>Thread safety: immutable.
 */
public final class AutoCheck {

  /** A choice within this factor of the faster path's time counts as a hit: {@value}. */
  public static final double TOLERANCE = 1.10;

  private final String profile;
  private final int compared;
  private final int hits;
  private final List<String> misses;

  private AutoCheck(String profile, int compared, int hits, List<String> misses) {
    this.profile = profile;
    this.compared = compared;
    this.hits = hits;
    this.misses = List.copyOf(misses);
  }

  /**
   * Checks the cost model's choices against the measured points.
   *
   * @param config the sweep (shape, threads)
   * @param points the sweep's points (not modified)
   * @param costs the profile AUTO would use
   * @return the check
   */
  public static AutoCheck of(SweepConfig config, List<SweepPoint> points, PathCosts costs) {
    Objects.requireNonNull(costs, "costs");
    Map<String, SweepPoint> dense = new HashMap<>();
    for (SweepPoint p : points) {
      if (p.measured() && p.path() == ComputePath.DENSE) {
        dense.put(key(p), p);
      }
    }
    int compared = 0;
    int hits = 0;
    List<String> misses = new ArrayList<>();
    for (SweepPoint s : points) {
      SweepPoint d = dense.get(key(s));
      if (!s.measured() || s.path() != ComputePath.SPARSE || d == null) {
        continue;
      }
      HeadShape shape = s.score().shape(config.heads(), config.keyDim(), config.valueDim());
      PathEstimate e =
          costs.estimate(
              s.n(), s.edges(), s.density() >= 1.0, s.score().function(), shape, config.threads());
      double denseMs = d.timing().medianMillis();
      double sparseMs = s.timing().medianMillis();
      double chosen = e.faster() == ComputePath.DENSE ? denseMs : sparseMs;
      double best = Math.min(denseMs, sparseMs);
      compared++;
      if (chosen <= TOLERANCE * best) {
        hits++;
      } else {
        misses.add(
            String.format(
                Locale.ROOT,
                "%s n=%d density=%s: AUTO takes %s (predicted dense %.3g ms, sparse %.3g ms);"
                    + " measured dense %.3g ms, sparse %.3g ms (%.2fx the faster)",
                s.score().label(),
                s.n(),
                Formats.percent(s.density()),
                e.faster().name().toLowerCase(Locale.ROOT),
                e.denseSeconds() * 1e3,
                e.sparseSeconds() * 1e3,
                denseMs,
                sparseMs,
                chosen / best));
      }
    }
    return new AutoCheck(costs.toString(), compared, hits, misses);
  }

  private static String key(SweepPoint p) {
    return p.score() + "/" + p.n() + "/" + p.edges();
  }

  /**
   * Returns how many points had both paths timed.
   *
   * @return the count
   */
  public int compared() {
    return compared;
  }

  /**
   * Returns at how many of them AUTO's path was the faster one or within 10 % of it.
   *
   * @return the count
   */
  public int hits() {
    return hits;
  }

  /**
   * Returns the points where it was not, one line each.
   *
   * @return an unmodifiable list
   */
  public List<String> misses() {
    return misses;
  }

  /**
   * Returns the report's lines: the figure, the profile, and every miss.
   *
   * @return text, lines ending in {@code \n}
   */
  public String describe() {
    StringBuilder b = new StringBuilder();
    b.append(
        String.format(
            Locale.ROOT,
            "AUTO picks the faster path or one within 10 %% at %d of %d points (%s)%n",
            hits,
            compared,
            compared == 0 ? "-" : String.format(Locale.ROOT, "%.1f %%", 100.0 * hits / compared)));
    b.append("  cost model: ").append(profile).append('\n');
    for (String m : misses) {
      b.append("  miss: ").append(m).append('\n');
    }
    return b.toString();
  }
}
