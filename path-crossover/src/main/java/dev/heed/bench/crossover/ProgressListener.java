package dev.heed.bench.crossover;

import java.io.PrintStream;
import java.time.Duration;
import java.util.Locale;

/**
 * Receives the sweep's progress, so that a caller (the runner's command line, or the {@code heed
 * bench crossover} verb) can show it. All methods have empty defaults.
 *
 * <p>Thread safety: the sweep calls a listener from the thread that runs it.
 */
public interface ProgressListener {

  /**
   * A stage message, such as a measured limit or the expected duration.
   *
   * @param line one line of text
   */
  default void message(String line) {}

  /**
   * One point is done (measured or skipped).
   *
   * @param index the 1-based index of the point
   * @param total the number of points
   * @param point the point
   * @param elapsed time since the sweep started
   * @param remaining estimated time left
   */
  default void pointDone(
      int index, int total, SweepPoint point, Duration elapsed, Duration remaining) {}

  /**
   * Returns a listener that ignores everything.
   *
   * @return the listener
   */
  static ProgressListener none() {
    return new ProgressListener() {};
  }

  /**
   * Returns a listener that prints one line per event to {@code stream} (the command line passes
   * {@code System.err}), for example {@code [ 7/48] n=2048 density=3 % dot-product SPARSE: 1.92 ms
   * | elapsed 0:31, about 1:10 left}.
   *
   * @param stream where to print
   * @return the listener
   */
  static ProgressListener printingTo(PrintStream stream) {
    return new ProgressListener() {
      @Override
      public void message(String line) {
        stream.println(line);
        stream.flush();
      }

      @Override
      public void pointDone(
          int index, int total, SweepPoint point, Duration elapsed, Duration remaining) {
        String result =
            point.measured() ? Formats.millis(point.timing().medianMillis()) + " ms" : point.note();
        int width = String.valueOf(total).length();
        stream.println(
            String.format(
                Locale.ROOT,
                "[%" + width + "d/%d] n=%d density=%s %s %s: %s | elapsed %s, about %s left",
                index,
                total,
                point.n(),
                Formats.percent(point.density()),
                point.score().label(),
                point.path(),
                result,
                Formats.duration(elapsed),
                Formats.duration(remaining)));
        stream.flush();
      }
    };
  }
}
