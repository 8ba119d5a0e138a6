package dev.heed.sparse.internal;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.regex.Matcher;
import java.util.regex.Pattern;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Says once per JVM, at INFO, when a large sparse call runs in a process without transparent huge
 * pages on Linux. The packed node table is read at random places, and on 4 KiB pages each such read
 * can also miss the processor's page-translation cache: the R-MAT 1M-node GAT layer ran 1.21–1.30×
 * faster (float32 rows) and 1.11–1.15× faster (bfloat16 rows in RCM order) with {@code
 * -XX:+UseTransparentHugePages} on the reference guest ({@code benchmarks/RESULTS.md}). The flag is
 * the JVM's, read at start-up, so Heed can only say so; and it costs a short-lived process more
 * than it gains (each 2 MiB page is built when first touched), so it is advice, not a default.
 *
 * <p>Evidence read, once: {@code /proc/self/smaps_rollup}'s {@code AnonHugePages} (the process's
 * anonymous memory on transparent huge pages) and {@code Private_Hugetlb} / {@code Shared_Hugetlb}
 * (on explicit ones, {@code -XX:+UseLargePages}), all 0 meaning none, and {@code
 * /sys/kernel/mm/transparent_hugepage/enabled} (the bracketed mode). Anything missing or unreadable
 * (another operating system, a restricted container) means no advice.
 *
 * <p>Thread safety: safe from any thread; the check runs and the message is logged at most once.
 */
final class HugePageAdvice {

  /** Tables from this size on get the advice: about 210k nodes of the float32 factored layout. */
  static final long MIN_TABLE_BYTES = 64L << 20;

  private static final Logger LOG = LoggerFactory.getLogger(HugePageAdvice.class);
  private static final AtomicBoolean CHECKED = new AtomicBoolean();
  private static final Pattern ANON_HUGE = Pattern.compile("(?m)^AnonHugePages:\\s*(\\d+)\\s*kB");

  /** Huge pages of hugetlbfs ({@code -XX:+UseLargePages} without transparent huge pages). */
  private static final Pattern HUGETLB =
      Pattern.compile("(?m)^(?:Private|Shared)_Hugetlb:\\s*(\\d+)\\s*kB");

  private static final Pattern MODE = Pattern.compile("\\[(\\w+)\\]");

  private HugePageAdvice() {}

  /**
   * Checks this process once, the first time a call's table reaches {@link #MIN_TABLE_BYTES}, and
   * logs the advice if it applies.
   *
   * @param tableBytes the call's packed table in bytes
   * @param nodes the call's node count, for the message
   */
  static void considerOnce(long tableBytes, int nodes) {
    if (tableBytes < MIN_TABLE_BYTES || CHECKED.get() || !CHECKED.compareAndSet(false, true)) {
      return;
    }
    String advice;
    try {
      advice =
          advice(
              read(Path.of("/proc/self/smaps_rollup")),
              read(Path.of("/sys/kernel/mm/transparent_hugepage/enabled")),
              nodes);
    } catch (RuntimeException e) {
      // advice only: a file in an unexpected form must not fail the call that asked
      LOG.debug("could not read the process's huge-page state", e);
      return;
    }
    if (advice != null) {
      LOG.info(advice);
    }
  }

  /**
   * Returns the advice for a process, or null when none applies.
   *
   * @param smapsRollup the text of {@code /proc/self/smaps_rollup}, or null if unreadable
   * @param enabled the text of {@code /sys/kernel/mm/transparent_hugepage/enabled}, or null
   * @param nodes the call's node count, for the message
   * @return one line, or null: the process already has huge pages, or the evidence is missing
   */
  static String advice(String smapsRollup, String enabled, int nodes) {
    if (smapsRollup == null || enabled == null) {
      return null;
    }
    Matcher huge = ANON_HUGE.matcher(smapsRollup);
    Matcher mode = MODE.matcher(enabled);
    if (!huge.find() || !mode.find() || Long.parseLong(huge.group(1)) > 0) {
      return null;
    }
    Matcher hugetlb = HUGETLB.matcher(smapsRollup);
    while (hugetlb.find()) {
      if (Long.parseLong(hugetlb.group(1)) > 0) {
        return null; // the heap is on explicit huge pages
      }
    }
    String prefix =
        "Sparse attention over "
            + nodes
            + " nodes reads node rows at random places, and this process has no transparent huge"
            + " pages (AnonHugePages 0 kB, no hugetlbfs pages), so those reads also miss the"
            + " page-translation cache.";
    String measured =
        " On a 1M-node GAT layer huge pages measured 1.1-1.3x faster; they cost a short-lived"
            + " process more than they save (README: Huge pages).";
    return switch (mode.group(1)) {
      case "never" ->
          prefix
              + " The kernel has them off (/sys/kernel/mm/transparent_hugepage/enabled is never);"
              + " a long-running process with large graphs gains from madvise or always there and"
              + " -XX:+UseTransparentHugePages on the JVM."
              + measured;
      default ->
          prefix
              + " For a long-running process with large graphs, start the JVM with"
              + " -XX:+UseTransparentHugePages."
              + measured;
    };
  }

  /** The file's text, or null if it is missing or unreadable. */
  static String read(Path file) {
    try {
      return Files.readString(file, StandardCharsets.US_ASCII);
    } catch (IOException | RuntimeException e) {
      return null; // not Linux, or not readable here: no evidence, no advice
    }
  }
}
