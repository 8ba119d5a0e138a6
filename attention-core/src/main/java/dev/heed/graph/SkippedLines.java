package dev.heed.graph;

import java.util.List;
import java.util.Objects;

/**
 * What a lenient edge-list read skipped: how many malformed lines, and the first few of them with
 * the reason each was skipped.
 *
 * <p>Thread safety: immutable.
 *
 * @param count the number of malformed lines skipped, at least 0
 * @param first the first {@link #MAX_REPORTED} skipped lines (fewer if fewer were skipped), in file
 *     order; unmodifiable
 */
public record SkippedLines(long count, List<Line> first) {

  /** The most skipped lines reported one by one. */
  public static final int MAX_REPORTED = 10;

  /** Nothing skipped. */
  public static final SkippedLines NONE = new SkippedLines(0, List.of());

  /**
   * One skipped line.
   *
   * @param lineNumber the 1-based line number
   * @param reason why the line is not an edge
   */
  public record Line(long lineNumber, String reason) {
    /**
     * Validates the components.
     *
     * @throws NullPointerException if {@code reason} is null
     */
    public Line {
      Objects.requireNonNull(reason, "reason");
    }
  }

  /**
   * Validates and copies the components.
   *
   * @throws IllegalArgumentException if {@code count} is negative or smaller than the list
   * @throws NullPointerException if {@code first} is null
   */
  public SkippedLines {
    first = List.copyOf(first);
    if (count < first.size()) {
      throw new IllegalArgumentException(
          "count " + count + " is smaller than the " + first.size() + " lines reported");
    }
  }
}
