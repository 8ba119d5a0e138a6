package dev.heed.cli;

import java.util.Locale;
import me.tongfei.progressbar.ConsoleProgressBarConsumer;
import me.tongfei.progressbar.ProgressBar;
import me.tongfei.progressbar.ProgressBarBuilder;
import me.tongfei.progressbar.ProgressBarStyle;

/**
 * Progress bars on stderr for long reads and runs, shown only where a person watches: when the
 * console is a terminal (so never when output is piped or redirected), unless {@code --no-progress}
 * is given, and only for inputs of at least {@link #MIN_BYTES}. Otherwise every method does
 * nothing.
 */
final class ProgressDisplay {

  /** Files smaller than this are read without a bar: 16 MiB. */
  static final long MIN_BYTES = 16L << 20;

  /** Graphs with fewer nodes are classified without a bar. */
  static final int MIN_NODES = 100_000;

  private final boolean enabled;

  private ProgressDisplay(boolean enabled) {
    this.enabled = enabled;
  }

  /** Bars on a terminal unless switched off. */
  static ProgressDisplay forTerminal(boolean noProgress) {
    return new ProgressDisplay(!noProgress && System.console() != null);
  }

  /** No bars at all. */
  static ProgressDisplay off() {
    return new ProgressDisplay(false);
  }

  /** A bar counting MiB of {@code totalBytes} (several passes: their sum), or none. */
  Bar bytes(String task, long totalBytes) {
    if (!enabled || totalBytes < MIN_BYTES) {
      return Bar.NONE;
    }
    return new Bar(builder(task).setInitialMax(totalBytes >> 20).setUnit(" MiB", 1).build(), 20);
  }

  /** A bar without a known end (elapsed time only) for work over {@code nodes} nodes, or none. */
  Bar open(String task, int nodes) {
    if (!enabled || nodes < MIN_NODES) {
      return Bar.NONE;
    }
    return new Bar(
        builder(task)
            .setInitialMax(-1)
            .setTaskName(String.format(Locale.ROOT, "%s %,d nodes", task, nodes))
            .build(),
        0);
  }

  /** A bar counting {@code total} steps (such as batches) in {@code unit}, or none. */
  Bar steps(String task, long total, String unit) {
    if (!enabled || total < 2) {
      return Bar.NONE;
    }
    return new Bar(builder(task).setInitialMax(total).setUnit(unit, 1).build(), 0);
  }

  private static ProgressBarBuilder builder(String task) {
    return new ProgressBarBuilder()
        .setTaskName(task)
        .setStyle(ProgressBarStyle.ASCII)
        .setConsumer(new ConsoleProgressBarConsumer(System.err));
  }

  /** One bar; closing it prints its last state and a line break. */
  static final class Bar implements AutoCloseable {
    static final Bar NONE = new Bar(null, 0);

    private final ProgressBar bar;
    private final int shift;

    private Bar(ProgressBar bar, int shift) {
      this.bar = bar;
      this.shift = shift;
    }

    /** Moves the bar to {@code done} (bytes for a byte bar). */
    void stepTo(long done) {
      if (bar != null) {
        bar.stepTo(done >> shift);
      }
    }

    @Override
    public void close() {
      if (bar != null) {
        bar.close();
      }
    }
  }
}
