package dev.heed.graph;

import java.io.IOException;
import java.nio.file.Path;

/**
 * A line of an edge-list file that is not a valid edge. The message names the file, the line number
 * (1-based, counting every line), what was wrong and, where one setting of {@link
 * EdgeListFileBuilder} would fix it, which ({@link #remedy()}); a command-line tool can name its
 * own option for that setting instead.
 *
 * <p>Thread safety: immutable.
 */
public final class EdgeListFormatException extends IOException {

  private static final long serialVersionUID = 1L;

  private final transient Path file;
  private final long lineNumber;
  private final String reason;
  private final Remedy remedy;
  private final String remedyValue;

  /** The builder setting that would read the line, when the fault points at one. */
  public enum Remedy {
    /** No single setting; the line itself is wrong. */
    NONE,
    /**
     * Another delimiter: {@link EdgeListFileBuilder#delimiter(char)}, value in {@link
     * #remedyValue()}.
     */
    DELIMITER,
    /** The line is a header: {@link EdgeListFileBuilder#header(boolean) header(true)}. */
    HEADER,
    /**
     * The line has more columns than the two ids: {@link EdgeListFileBuilder#sourceColumn(String)}
     * and {@link EdgeListFileBuilder#targetColumn(String)}, or {@link
     * EdgeListFileBuilder#ignoreExtraColumns(boolean)}.
     */
    EXTRA_COLUMNS
  }

  /**
   * Creates the exception with no remedy.
   *
   * @param file the file that was read
   * @param lineNumber the 1-based line number
   * @param reason what was wrong with the line, without the file and line
   */
  public EdgeListFormatException(Path file, long lineNumber, String reason) {
    this(file, lineNumber, reason, Remedy.NONE, "");
  }

  /**
   * Creates the exception; the message adds the remedy in terms of the builder's settings.
   *
   * @param file the file that was read
   * @param lineNumber the 1-based line number
   * @param reason what was wrong with the line, without the file, line or remedy
   * @param remedy the setting that would read the line, not null
   * @param remedyValue the value for that setting (the delimiter), or empty
   */
  public EdgeListFormatException(
      Path file, long lineNumber, String reason, Remedy remedy, String remedyValue) {
    super(file + ", line " + lineNumber + ": " + reason + describe(remedy, remedyValue));
    this.file = file;
    this.lineNumber = lineNumber;
    this.reason = reason;
    this.remedy = remedy;
    this.remedyValue = remedyValue;
  }

  private static String describe(Remedy remedy, String value) {
    return switch (remedy) {
      case NONE -> "";
      case DELIMITER -> "; the line holds '" + value + "': set delimiter('" + value + "')";
      case HEADER -> "; if it is a header line, set header(true)";
      case EXTRA_COLUMNS ->
          "; choose the id columns (sourceColumn, targetColumn) or pass over the others"
              + " (ignoreExtraColumns(true))";
    };
  }

  /**
   * Returns the file that was read.
   *
   * @return the path, possibly null after deserialisation
   */
  public Path file() {
    return file;
  }

  /**
   * Returns the 1-based number of the bad line.
   *
   * @return the line number
   */
  public long lineNumber() {
    return lineNumber;
  }

  /**
   * Returns what was wrong with the line.
   *
   * @return the reason, without file and line
   */
  public String reason() {
    return reason;
  }

  /**
   * Returns the setting that would read the line, if the fault points at one.
   *
   * @return the remedy, {@link Remedy#NONE} if none
   */
  public Remedy remedy() {
    return remedy;
  }

  /**
   * Returns the value for the remedy's setting: the suggested delimiter for {@link
   * Remedy#DELIMITER}, else empty.
   *
   * @return the value, never null
   */
  public String remedyValue() {
    return remedyValue;
  }
}
