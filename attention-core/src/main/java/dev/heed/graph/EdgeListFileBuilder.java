package dev.heed.graph;

import java.io.IOException;
import java.io.InputStream;
import java.io.UncheckedIOException;
import java.nio.ByteBuffer;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.CodingErrorAction;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.attribute.FileTime;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Objects;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Builds a {@link CsrGraph} from an edge-list file: one edge {@code source<delimiter>target} per
 * line, UTF-8, CSV ({@code ','}) or TSV ({@code '\t'}) or whitespace-separated ({@code ' '}: runs
 * of spaces and tabs). Node {@code t} attends to node {@code s} for every line {@code s,t}.
 *
 * <pre>{@code
 * // users.csv:  # follower,followee
 * //             alice,bob
 * //             carol,bob
 * EdgeListResult<String> read =
 *     EdgeListFileBuilder.stringIds(Path.of("users.csv"))
 *         .delimiter(',')
 *         .selfLoops(SelfLoopPolicy.ADD)
 *         .build();
 * int bob = read.nodes().requireIndexOf("bob"); // bob attends to alice, carol and himself
 * }</pre>
 *
 * <p><b>Lines.</b> Line numbers count every line from 1. A UTF-8 byte order mark at the start is
 * passed over, and lines may end in CRLF. Blank lines and lines starting with the comment prefix
 * (after leading spaces; default {@value #DEFAULT_COMMENT_PREFIX}) carry no edge and are passed
 * over. With {@link #header(boolean) header(true)}, or when a column is chosen by name, the first
 * other line is a header. Fields follow RFC 4180: a field that starts with {@code "} runs to the
 * matching quote and may hold the delimiter, line breaks and quotes written {@code ""}; spaces
 * around fields are removed. Every other line must have exactly two non-empty fields, the source id
 * then the target id, unless columns are chosen ({@link #sourceColumn(String)}, {@link
 * #sourceColumn(int)} and the target twins) or {@link #ignoreExtraColumns(boolean) extra columns
 * are passed over}. A line that breaks these rules fails the build with an {@link
 * EdgeListFormatException} naming the file, the line number, the fault and, where one setting would
 * fix it (another delimiter, a header, extra columns), which; in {@link #lenient(boolean) lenient}
 * mode it is skipped instead and reported in {@link EdgeListResult#skipped()} (a count plus the
 * first {@value SkippedLines#MAX_REPORTED} line numbers and reasons). Nothing is skipped silently.
 *
 * <p><b>Ids.</b> Three entry points choose how ids become node indices:
 *
 * <ul>
 *   <li>{@link #stringIds(Path)}: any text; nodes numbered in order of first appearance;
 *   <li>{@link #integerIds(Path)}: signed 64-bit integers, mapped like strings (order of first
 *       appearance), stored as primitives; for sparse or large ids such as database keys;
 *   <li>{@link #indexIds(Path)}: integers used as they are, as node indices {@code 0..n-1}, with no
 *       map; n is {@link #nodeCount(int)} if set, else the largest id plus one (ids that never
 *       appear become isolated nodes).
 * </ul>
 *
 * <p><b>Memory and cost.</b> The file is read twice: the first pass collects the ids and counts the
 * entries of every row, the second places each edge straight into the final column array (a
 * counting sort by target), so no per-edge array other than the graph's own columns is ever held;
 * rows are then sorted in place and duplicates merged in place. When at most 1/8 of the entries
 * were merged away, the graph keeps that unused tail rather than copying, and the peak heap is
 * about the finished graph plus the id map plus a 64 KiB read buffer; when more were merged (say a
 * file that lists every edge twice), the columns are copied once to size and the peak briefly holds
 * both copies. Time: O(file size + n + E). The file must not change while it is read; a change
 * between the passes is detected (by size, modification time and a checksum of the edges) and fails
 * the build.
 *
 * <p>Defaults: {@link #DEFAULT_DELIMITER}, {@link #DEFAULT_COMMENT_PREFIX}, no header, source in
 * column 0 and target in column 1 with no other columns, strict (not lenient), {@link
 * #DEFAULT_SELF_LOOPS}, {@link #DEFAULT_DIRECTION}, {@link #DEFAULT_DUPLICATES}.
 *
 * <p>Thread safety: not thread safe; use one builder per thread.
 *
 * @param <V> the id type: {@code String} or {@code Long}
 */
public final class EdgeListFileBuilder<V> {

  /** Default field delimiter: {@code ','} (CSV). */
  public static final char DEFAULT_DELIMITER = ',';

  /** Default comment prefix: {@code "#"}. */
  public static final String DEFAULT_COMMENT_PREFIX = "#";

  /** Default self-loop policy: {@link SelfLoopPolicy#ADD} (GAT convention). */
  public static final SelfLoopPolicy DEFAULT_SELF_LOOPS = SelfLoopPolicy.ADD;

  /** Default direction policy: {@link DirectionPolicy#KEEP}. */
  public static final DirectionPolicy DEFAULT_DIRECTION = DirectionPolicy.KEEP;

  /** Default duplicate policy: {@link DuplicatePolicy#MERGE}. */
  public static final DuplicatePolicy DEFAULT_DUPLICATES = DuplicatePolicy.MERGE;

  private static final Logger LOG = LoggerFactory.getLogger(EdgeListFileBuilder.class);

  private static final int BUFFER_BYTES = 1 << 16;
  private static final int EXCERPT_CHARS = 60;
  private static final long PROGRESS_STEP_BYTES = 1 << 22;
  private static final byte[] UTF8_BOM = {(byte) 0xEF, (byte) 0xBB, (byte) 0xBF};

  private enum IdKind {
    STRING,
    MAPPED_INTEGER,
    INDEX
  }

  private final Path file;
  private final IdKind idKind;
  private char delimiter = DEFAULT_DELIMITER;
  private String commentPrefix = DEFAULT_COMMENT_PREFIX;
  private boolean header;
  private boolean lenient;
  private int nodeCount = -1;
  private SelfLoopPolicy selfLoops = DEFAULT_SELF_LOOPS;
  private DirectionPolicy direction = DEFAULT_DIRECTION;
  private DuplicatePolicy duplicates = DEFAULT_DUPLICATES;
  private int sourceColumn = 0;
  private int targetColumn = 1;
  private String sourceName;
  private String targetName;
  private boolean columnsChosen;
  private boolean ignoreExtraColumns;
  private ReadProgress progress;

  private EdgeListFileBuilder(Path file, IdKind idKind) {
    this.file = Objects.requireNonNull(file, "file");
    this.idKind = idKind;
  }

  /**
   * Starts a builder for a file whose ids are text; nodes are numbered in order of first appearance
   * (source before target on each line).
   *
   * @param file the edge-list file, read in {@link #build()}
   * @return a builder with the defaults
   * @throws NullPointerException if {@code file} is null
   */
  public static EdgeListFileBuilder<String> stringIds(Path file) {
    return new EdgeListFileBuilder<>(file, IdKind.STRING);
  }

  /**
   * Starts a builder for a file whose ids are signed 64-bit integers, mapped to node indices in
   * order of first appearance (source before target on each line).
   *
   * @param file the edge-list file, read in {@link #build()}
   * @return a builder with the defaults
   * @throws NullPointerException if {@code file} is null
   */
  public static EdgeListFileBuilder<Long> integerIds(Path file) {
    return new EdgeListFileBuilder<>(file, IdKind.MAPPED_INTEGER);
  }

  /**
   * Starts a builder for a file whose ids are node indices {@code 0..n-1}, used as they are.
   *
   * @param file the edge-list file, read in {@link #build()}
   * @return a builder with the defaults
   * @throws NullPointerException if {@code file} is null
   */
  public static EdgeListFileBuilder<Long> indexIds(Path file) {
    return new EdgeListFileBuilder<>(file, IdKind.INDEX);
  }

  /**
   * Sets the field delimiter: {@code ','} for CSV, {@code '\t'} for TSV, {@code ' '} for runs of
   * spaces and tabs.
   *
   * @param delimiter the delimiter; an ASCII character other than a line break
   * @return this builder
   * @throws IllegalArgumentException if {@code delimiter} is a line break or not ASCII
   */
  public EdgeListFileBuilder<V> delimiter(char delimiter) {
    if (delimiter == '\n' || delimiter == '\r' || delimiter > 127) {
      throw new IllegalArgumentException(
          "the delimiter must be an ASCII character other than a line break, got U+"
              + String.format("%04X", (int) delimiter)
              + "; use ',' for CSV, '\\t' for TSV or ' ' for whitespace");
    }
    this.delimiter = delimiter;
    return this;
  }

  /**
   * Sets whether the first line that is neither blank nor a comment is a header to pass over.
   *
   * @param header true if the file has a header line; default false
   * @return this builder
   */
  public EdgeListFileBuilder<V> header(boolean header) {
    this.header = header;
    return this;
  }

  /**
   * Sets the comment prefix: lines starting with it (after leading spaces) are passed over.
   *
   * @param prefix the prefix, or null or empty for none
   * @return this builder
   */
  public EdgeListFileBuilder<V> commentPrefix(String prefix) {
    this.commentPrefix = prefix == null ? "" : prefix;
    return this;
  }

  /**
   * Sets lenient mode: malformed lines are skipped and reported in {@link EdgeListResult#skipped()}
   * instead of failing the build. Duplicate edges are not malformed lines; the {@link
   * DuplicatePolicy} decides about them.
   *
   * @param lenient true to skip and report malformed lines; default false
   * @return this builder
   */
  public EdgeListFileBuilder<V> lenient(boolean lenient) {
    this.lenient = lenient;
    return this;
  }

  /**
   * Sets the node count for {@link #indexIds(Path) index ids}: ids must then lie in {@code
   * 0..nodeCount-1}; without it n is the largest id plus one.
   *
   * @param nodeCount the node count, at least 0
   * @return this builder
   * @throws IllegalStateException if the builder is not for index ids
   * @throws IllegalArgumentException if {@code nodeCount} is negative
   */
  public EdgeListFileBuilder<V> nodeCount(int nodeCount) {
    if (idKind != IdKind.INDEX) {
      throw new IllegalStateException(
          "nodeCount applies to index ids only (EdgeListFileBuilder.indexIds); mapped ids give"
              + " n = the number of distinct ids");
    }
    if (nodeCount < 0) {
      throw new IllegalArgumentException("node count must be at least 0, got " + nodeCount);
    }
    this.nodeCount = nodeCount;
    return this;
  }

  /**
   * Reads the source id from column {@code index} (0-based) instead of column 0. Choosing a column
   * lets lines have other columns, which are passed over.
   *
   * @param index the column, at least 0
   * @return this builder
   * @throws IllegalArgumentException if {@code index} is negative
   */
  public EdgeListFileBuilder<V> sourceColumn(int index) {
    this.sourceColumn = checkColumn(index, "source");
    this.sourceName = null;
    this.columnsChosen = true;
    return this;
  }

  /**
   * Reads the target id from column {@code index} (0-based) instead of column 1. Choosing a column
   * lets lines have other columns, which are passed over.
   *
   * @param index the column, at least 0
   * @return this builder
   * @throws IllegalArgumentException if {@code index} is negative
   */
  public EdgeListFileBuilder<V> targetColumn(int index) {
    this.targetColumn = checkColumn(index, "target");
    this.targetName = null;
    this.columnsChosen = true;
    return this;
  }

  /**
   * Reads the source id from the column the header names {@code name} (matched exactly, else
   * ignoring case if that finds one column). The file then has a header line, whatever {@link
   * #header(boolean)} says; other columns are passed over.
   *
   * @param name the column name, not empty
   * @return this builder
   * @throws IllegalArgumentException if {@code name} is empty
   */
  public EdgeListFileBuilder<V> sourceColumn(String name) {
    this.sourceName = checkName(name, "source");
    this.columnsChosen = true;
    return this;
  }

  /**
   * Reads the target id from the column the header names {@code name}; see {@link
   * #sourceColumn(String)}.
   *
   * @param name the column name, not empty
   * @return this builder
   * @throws IllegalArgumentException if {@code name} is empty
   */
  public EdgeListFileBuilder<V> targetColumn(String name) {
    this.targetName = checkName(name, "target");
    this.columnsChosen = true;
    return this;
  }

  /**
   * Sets whether columns after the two ids (weights, timestamps) are passed over. Off by default,
   * so that a file of another shape is noticed; choosing a column by {@link #sourceColumn(int)
   * index} or {@link #sourceColumn(String) name} also passes over the others.
   *
   * @param ignore true to pass over extra columns; default false
   * @return this builder
   */
  public EdgeListFileBuilder<V> ignoreExtraColumns(boolean ignore) {
    this.ignoreExtraColumns = ignore;
    return this;
  }

  /**
   * Sets a listener told how far each of the two passes has read, about every 4 MiB and at the end
   * of each pass, on the thread that calls {@link #build()}.
   *
   * @param listener the listener, or null for none
   * @return this builder
   */
  public EdgeListFileBuilder<V> progress(ReadProgress listener) {
    this.progress = listener;
    return this;
  }

  private static int checkColumn(int index, String role) {
    if (index < 0) {
      throw new IllegalArgumentException(
          "the " + role + " column must be at least 0 (columns count from 0), got " + index);
    }
    return index;
  }

  private static String checkName(String name, String role) {
    if (Objects.requireNonNull(name, role + " column name").isEmpty()) {
      throw new IllegalArgumentException("the " + role + " column name must not be empty");
    }
    return name;
  }

  /**
   * Sets all three policies at once, typically to build the graph the way a model's training graph
   * was built ({@code model.graphPolicies()}).
   *
   * @param conventions direction, self-loop and duplicate policies, not null
   * @return this builder
   */
  public EdgeListFileBuilder<V> policies(GraphPolicies conventions) {
    Objects.requireNonNull(conventions, "conventions");
    return direction(conventions.direction())
        .selfLoops(conventions.selfLoops())
        .duplicates(conventions.duplicates());
  }

  /**
   * Sets the self-loop policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public EdgeListFileBuilder<V> selfLoops(SelfLoopPolicy policy) {
    this.selfLoops = Objects.requireNonNull(policy, "selfLoops policy");
    return this;
  }

  /**
   * Sets the direction policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public EdgeListFileBuilder<V> direction(DirectionPolicy policy) {
    this.direction = Objects.requireNonNull(policy, "direction policy");
    return this;
  }

  /**
   * Sets the duplicate-edge policy.
   *
   * @param policy the policy, not null
   * @return this builder
   */
  public EdgeListFileBuilder<V> duplicates(DuplicatePolicy policy) {
    this.duplicates = Objects.requireNonNull(policy, "duplicates policy");
    return this;
  }

  /**
   * Reads the file (twice) and builds the graph. O(file size + n + E).
   *
   * @return the graph, its node index and what lenient mode skipped
   * @throws EdgeListFormatException naming file, line and fault for a malformed line (not in
   *     lenient mode)
   * @throws IOException if the file cannot be read or changed between the two passes
   * @throws dev.heed.attention.MemoryBudgetExceededException if the graph or its id map would not
   *     fit the heap budget ({@link dev.heed.attention.MemoryBudget}); checked before allocating
   * @throws IllegalArgumentException if an edge is repeated under {@link DuplicatePolicy#REJECT}
   *     (naming the edge by its ids and both line numbers)
   */
  @SuppressWarnings("unchecked") // the id kind was fixed by the typed entry point
  public EdgeListResult<V> build() throws IOException {
    if (!commentPrefix.isEmpty() && commentPrefix.indexOf(delimiter) == 0 && delimiter != ' ') {
      throw new IllegalArgumentException(
          "the comment prefix '" + commentPrefix + "' starts with the delimiter; choose another");
    }
    if (sourceName == null && targetName == null && sourceColumn == targetColumn) {
      throw new IllegalArgumentException(
          "the source and target columns are the same (column " + sourceColumn + ")");
    }
    FileSource source = new FileSource();
    CsrGraph graph;
    try {
      graph =
          CsrAssembler.assemble(source, Math.max(nodeCount, 0), selfLoops, direction, duplicates);
    } catch (UncheckedIOException e) {
      throw e.getCause();
    }
    NodeIndex<?> nodes =
        switch (idKind) {
          case STRING -> source.strings.freeze();
          case MAPPED_INTEGER -> source.longs.freeze();
          case INDEX -> LongNodeIndex.identity(source.nodeCount());
        };
    SkippedLines skipped =
        source.skippedCount == 0
            ? SkippedLines.NONE
            : new SkippedLines(source.skippedCount, source.skippedFirst);
    if (skipped.count() > 0) {
      SkippedLines.Line first = skipped.first().get(0);
      LOG.warn(
          "lenient read of {} skipped {} malformed lines; the first, line {}: {}",
          file,
          skipped.count(),
          first.lineNumber(),
          first.reason());
    }
    LOG.debug(
        "read {}: {} edge lines, {} nodes, {} entries",
        file,
        source.edgeLines,
        graph.nodeCount(),
        graph.edgeCount());
    return new EdgeListResult<>(graph, (NodeIndex<V>) nodes, source.edgeLines, skipped);
  }

  /** Reads the file on every pass; the first pass collects ids, later passes look them up. */
  private final class FileSource implements EdgeSource {
    final ObjectIdTable<String> strings = idKind == IdKind.STRING ? new ObjectIdTable<>(16) : null;
    final LongIdTable longs = idKind == IdKind.MAPPED_INTEGER ? new LongIdTable(16) : null;
    long skippedCount;
    final List<SkippedLines.Line> skippedFirst = new ArrayList<>();
    long edgeLines;
    private int passes;
    private int maxIndex = -1;
    private int sourceIndex = sourceColumn;
    private int targetIndex = targetColumn;
    private long size;
    private FileTime modified;

    // Per-record parse results.
    private int[] fieldStarts = new int[4];
    private int[] fieldEnds = new int[4];
    private boolean[] fieldEscaped = new boolean[4];
    private int fieldCount;
    private int fieldStart0;
    private int fieldEnd0;
    private boolean escaped0;
    private int fieldStart1;
    private int fieldEnd1;
    private boolean escaped1;
    private int recordStart;
    private int recordEndIndex;
    private int recordNewlines;
    private boolean dataSeen;
    private boolean notInteger;
    private String problem;
    private EdgeListFormatException.Remedy remedy = EdgeListFormatException.Remedy.NONE;
    private String remedyValue = "";

    @Override
    public void forEachEdge(Visitor visitor) {
      try {
        scan(visitor);
      } catch (IOException e) {
        throw new UncheckedIOException(e);
      }
    }

    @Override
    public int nodeCount() {
      return switch (idKind) {
        case STRING -> strings.size();
        case MAPPED_INTEGER -> longs.size();
        case INDEX -> nodeCount >= 0 ? nodeCount : maxIndex + 1;
      };
    }

    @Override
    public String describePosition(long position) {
      return position < 0 ? "file " + file : "line " + position + " of " + file;
    }

    @Override
    public String describeNode(int index) {
      return switch (idKind) {
        case STRING -> "'" + strings.idAt(index) + "'";
        case MAPPED_INTEGER -> Long.toString(longs.idAt(index));
        case INDEX -> Integer.toString(index);
      };
    }

    private void scan(Visitor visitor) throws IOException {
      boolean first = passes == 0;
      passes++;
      long sizeNow = Files.size(file);
      FileTime modifiedNow = Files.getLastModifiedTime(file);
      if (first) {
        size = sizeNow;
        modified = modifiedNow;
      } else if (sizeNow != size || !modifiedNow.equals(modified)) {
        throw changed();
      }
      byte[] buf = new byte[BUFFER_BYTES];
      int length = 0; // valid bytes in buf
      int pos = 0; // start of the current record
      long line = 0; // physical lines before the current record
      long bytesRead = 0;
      long reportedAt = 0;
      boolean headerPending = hasHeader();
      boolean atFileStart = true;
      dataSeen = false;
      boolean eof = false;
      try (InputStream in = Files.newInputStream(file)) {
        while (true) {
          int end = pos < length ? recordEnd(buf, pos, length, eof) : -1;
          if (end < 0) {
            if (eof) {
              break;
            }
            // Move the partial record to the front, grow if it fills the buffer, read more.
            int rest = length - pos;
            if (rest == buf.length) {
              byte[] bigger = new byte[buf.length * 2];
              System.arraycopy(buf, pos, bigger, 0, rest);
              buf = bigger;
            } else if (pos > 0) {
              System.arraycopy(buf, pos, buf, 0, rest);
            }
            pos = 0;
            length = rest;
            int read = in.read(buf, length, buf.length - length);
            if (read < 0) {
              eof = true;
            } else {
              length += read;
              bytesRead += read;
              if (progress != null && bytesRead - reportedAt >= PROGRESS_STEP_BYTES) {
                reportedAt = bytesRead;
                progress.onProgress(passes, 2, bytesRead, size);
              }
            }
            if (atFileStart && (length >= UTF8_BOM.length || eof)) {
              atFileStart = false; // nothing was consumed yet: buf starts at the file's start
              if (startsWithBom(buf, length)) {
                pos = UTF8_BOM.length;
              }
            }
            continue;
          }
          int next = end < length ? end + 1 : length;
          atFileStart = false;
          line++;
          long recordLine = line;
          line += recordNewlines;
          if (end > pos && buf[end - 1] == '\r') {
            end--;
          }
          int kind = classify(buf, pos, end, headerPending, recordLine);
          if (kind == LINE_HEADER) {
            headerPending = false;
          } else if (kind == LINE_EDGE) {
            edge(visitor, buf, recordLine, first);
            dataSeen = true;
          } else if (kind == LINE_MALFORMED) {
            malformed(buf, pos, end, recordLine, first);
            dataSeen = true;
          }
          pos = next;
        }
      }
      if (progress != null) {
        progress.onProgress(passes, 2, bytesRead, size);
      }
      if (!first
          && (Files.size(file) != size || !Files.getLastModifiedTime(file).equals(modified))) {
        throw changed();
      }
    }

    private boolean startsWithBom(byte[] b, int length) {
      if (length < UTF8_BOM.length) {
        return false;
      }
      for (int i = 0; i < UTF8_BOM.length; i++) {
        if (b[i] != UTF8_BOM[i]) {
          return false;
        }
      }
      return true;
    }

    /**
     * Finds the end of the record that starts at {@code from}: the index of its closing {@code
     * '\n'}, {@code length} when the data ends inside it at the end of the file, or -1 when more
     * data is needed. A line break inside a quoted field (RFC 4180) does not end the record; {@link
     * #recordNewlines} counts those.
     */
    private int recordEnd(byte[] b, int from, int length, boolean eof) {
      recordNewlines = 0;
      int i = from;
      while (i < length) {
        byte c = b[i];
        if (c == '\n') {
          return i;
        }
        if (c == '"') {
          break;
        }
        i++;
      }
      if (i == length) {
        return eof ? length : -1;
      }
      // A quote: scan again from the start, minding quoted fields. Comment lines have none.
      int s = skipBlanks(b, from, length);
      if (!commentPrefix.isEmpty() && !eof && s + commentPrefix.length() > length) {
        return -1;
      }
      if (!commentPrefix.isEmpty() && startsWith(b, s, length, commentPrefix)) {
        for (int j = i; j < length; j++) {
          if (b[j] == '\n') {
            return j;
          }
        }
        return eof ? length : -1;
      }
      boolean fieldStart = true;
      boolean quoted = false;
      int newlines = 0;
      for (i = from; i < length; i++) {
        byte c = b[i];
        if (quoted) {
          if (c == '"') {
            if (i + 1 == length && !eof) {
              return -1;
            }
            if (i + 1 < length && b[i + 1] == '"') {
              i++;
            } else {
              quoted = false;
            }
          } else if (c == '\n') {
            newlines++;
          }
        } else if (c == '\n') {
          recordNewlines = newlines;
          return i;
        } else if (c == '"' && fieldStart) {
          quoted = true;
          fieldStart = false;
        } else if (isDelimiter(c)) {
          fieldStart = true;
        } else if (!isBlank(c)) {
          fieldStart = false;
        }
      }
      if (eof) {
        recordNewlines = newlines;
        return length;
      }
      return -1;
    }

    private IOException changed() {
      return new IOException(
          "file "
              + file
              + " changed while the graph was being built from it (it is read twice); build from"
              + " a file that is not being written");
    }

    private boolean hasHeader() {
      return header || sourceName != null || targetName != null;
    }

    private boolean extraColumnsAllowed() {
      return ignoreExtraColumns || columnsChosen;
    }

    private static final int LINE_SKIP = 0;
    private static final int LINE_HEADER = 1;
    private static final int LINE_EDGE = 2;
    private static final int LINE_MALFORMED = 3;

    /** Splits a record into fields and picks the two ids, or says why it is not an edge. */
    private int classify(byte[] b, int start, int end, boolean headerPending, long line)
        throws EdgeListFormatException {
      int s = skipBlanks(b, start, end);
      if (s == end) {
        return LINE_SKIP;
      }
      if (!commentPrefix.isEmpty() && startsWith(b, s, end, commentPrefix)) {
        return LINE_SKIP;
      }
      int e = trimEnd(b, s, end);
      if (headerPending) {
        if (sourceName != null || targetName != null) {
          resolveColumnNames(b, s, e, line);
        }
        return LINE_HEADER;
      }
      if (!split(b, s, e)) {
        return LINE_MALFORMED;
      }
      int needed = Math.max(sourceIndex, targetIndex) + 1;
      if (fieldCount < needed) {
        if (fieldCount == 1) {
          problem = "expected two fields separated by " + delimiterName() + ", found one";
          char other = otherDelimiterIn(b, s, e);
          if (other != 0) {
            remedy = EdgeListFormatException.Remedy.DELIMITER;
            remedyValue = other == '\t' ? "\\t" : String.valueOf(other);
          } else {
            problem += "; is the delimiter right?";
          }
        } else {
          problem =
              "expected at least "
                  + needed
                  + " fields (source id in column "
                  + (sourceIndex + 1)
                  + ", target id in column "
                  + (targetIndex + 1)
                  + "), found "
                  + fieldCount;
        }
        return LINE_MALFORMED;
      }
      if (fieldCount > 2 && !extraColumnsAllowed()) {
        problem =
            "expected two fields separated by "
                + delimiterName()
                + ", found more ("
                + fieldCount
                + "); extra columns are read only when asked";
        remedy = EdgeListFormatException.Remedy.EXTRA_COLUMNS;
        return LINE_MALFORMED;
      }
      fieldStart0 = fieldStarts[sourceIndex];
      fieldEnd0 = fieldEnds[sourceIndex];
      escaped0 = fieldEscaped[sourceIndex];
      fieldStart1 = fieldStarts[targetIndex];
      fieldEnd1 = fieldEnds[targetIndex];
      escaped1 = fieldEscaped[targetIndex];
      if (fieldEnd0 == fieldStart0) {
        problem = "the source id (field " + (sourceIndex + 1) + ") is empty";
        return LINE_MALFORMED;
      }
      if (fieldEnd1 == fieldStart1) {
        problem = "the target id (field " + (targetIndex + 1) + ") is empty";
        return LINE_MALFORMED;
      }
      recordStart = s;
      recordEndIndex = e;
      return LINE_EDGE;
    }

    /**
     * Splits a trimmed record into fields (RFC 4180: a field that starts with {@code '"'} runs to
     * the matching quote, {@code ""} inside it stands for one quote); false with {@link #problem}
     * set if a quoted field is not closed or is followed by other text.
     */
    private boolean split(byte[] b, int s, int e) {
      fieldCount = 0;
      int i = s;
      while (true) {
        i = skipBlanks(b, i, e);
        int start;
        int stop;
        boolean escaped = false;
        if (i < e && b[i] == '"') {
          int j = i + 1;
          while (true) {
            if (j >= e) {
              problem = "the quoted field " + (fieldCount + 1) + " has no closing quote";
              return false;
            }
            if (b[j] == '"') {
              if (j + 1 < e && b[j + 1] == '"') {
                escaped = true;
                j += 2;
                continue;
              }
              break;
            }
            j++;
          }
          start = i + 1;
          stop = j;
          i = skipBlanks(b, j + 1, e);
          if (i < e && !isDelimiter(b[i])) {
            problem =
                "text after the closing quote of field "
                    + (fieldCount + 1)
                    + " (a quote inside a quoted field is written \"\")";
            return false;
          }
        } else {
          int j = i;
          while (j < e && !isDelimiter(b[j])) {
            j++;
          }
          start = i;
          stop = trimEnd(b, i, j);
          i = j;
        }
        addField(start, stop, escaped);
        if (i >= e) {
          return true;
        }
        i++; // the delimiter; for spaces, skipBlanks passes over the rest of the run
        if (delimiter == ' ') {
          i = skipBlanks(b, i, e);
          if (i >= e) {
            return true;
          }
        } else if (i == e) {
          addField(e, e, false); // an empty last field after a trailing delimiter
          return true;
        }
      }
    }

    private void addField(int start, int stop, boolean escaped) {
      if (fieldCount == fieldStarts.length) {
        fieldStarts = Arrays.copyOf(fieldStarts, fieldCount * 2);
        fieldEnds = Arrays.copyOf(fieldEnds, fieldCount * 2);
        fieldEscaped = Arrays.copyOf(fieldEscaped, fieldCount * 2);
      }
      fieldStarts[fieldCount] = start;
      fieldEnds[fieldCount] = stop;
      fieldEscaped[fieldCount] = escaped;
      fieldCount++;
    }

    /** Finds the columns named by the builder in the header record. */
    private void resolveColumnNames(byte[] b, int s, int e, long line)
        throws EdgeListFormatException {
      if (!split(b, s, e)) {
        throw new EdgeListFormatException(file, line, "header: " + problem);
      }
      List<String> names = new ArrayList<>(fieldCount);
      for (int k = 0; k < fieldCount; k++) {
        String name = text(b, fieldStarts[k], fieldEnds[k], fieldEscaped[k]);
        names.add(name == null ? "" : name);
      }
      problem = null;
      if (sourceName != null) {
        sourceIndex = columnOf(names, sourceName, "source", line);
      }
      if (targetName != null) {
        targetIndex = columnOf(names, targetName, "target", line);
      }
      if (sourceIndex == targetIndex) {
        throw new EdgeListFormatException(
            file,
            line,
            "the source and target columns are the same (column " + (sourceIndex + 1) + ")");
      }
    }

    private int columnOf(List<String> names, String name, String role, long line)
        throws EdgeListFormatException {
      int exact = names.indexOf(name);
      if (exact >= 0) {
        return exact;
      }
      int found = -1;
      for (int k = 0; k < names.size(); k++) {
        if (names.get(k).equalsIgnoreCase(name)) {
          if (found >= 0) {
            found = -2;
            break;
          }
          found = k;
        }
      }
      if (found >= 0) {
        return found;
      }
      throw new EdgeListFormatException(
          file,
          line,
          "the header has no "
              + (found == -2 ? "single " : "")
              + "column named '"
              + name
              + "' for the "
              + role
              + " id; its columns are "
              + names);
    }

    /** The first usual delimiter other than the current one found in the record, or 0. */
    private char otherDelimiterIn(byte[] b, int s, int e) {
      for (char c : new char[] {'\t', ';', '|', ',', ' '}) {
        if (c == delimiter || (c == '\t' && delimiter == ' ')) {
          continue;
        }
        for (int i = s; i < e; i++) {
          if (b[i] == c) {
            return c;
          }
        }
      }
      return 0;
    }

    private String delimiterName() {
      return describe(delimiter);
    }

    private String describe(char d) {
      return switch (d) {
        case ',' -> "',' (CSV)";
        case '\t' -> "a tab (TSV)";
        case ' ' -> "spaces";
        default -> "'" + d + "'";
      };
    }

    private boolean isDelimiter(byte c) {
      return c == delimiter || (delimiter == ' ' && c == '\t');
    }

    private boolean isBlank(byte c) {
      return c == ' ' || (c == '\t' && delimiter != '\t');
    }

    private int skipBlanks(byte[] b, int from, int end) {
      while (from < end && isBlank(b[from])) {
        from++;
      }
      return from;
    }

    private int trimEnd(byte[] b, int start, int end) {
      while (end > start && isBlank(b[end - 1])) {
        end--;
      }
      return end;
    }

    private boolean startsWith(byte[] b, int from, int end, String prefix) {
      if (end - from < prefix.length()) {
        return false;
      }
      for (int i = 0; i < prefix.length(); i++) {
        if (b[from + i] != (byte) prefix.charAt(i)) {
          return false;
        }
      }
      return true;
    }

    private void edge(Visitor visitor, byte[] b, long line, boolean first) throws IOException {
      int s;
      int t;
      switch (idKind) {
        case STRING -> {
          String a = text(b, fieldStart0, fieldEnd0, escaped0);
          String c = a == null ? null : text(b, fieldStart1, fieldEnd1, escaped1);
          if (c == null) {
            malformed(b, recordStart, recordEndIndex, line, first);
            return;
          }
          s = first ? strings.indexOrAdd(a) : strings.indexOf(a);
          t = first ? strings.indexOrAdd(c) : strings.indexOf(c);
        }
        case MAPPED_INTEGER -> {
          long a = parseLong(b, fieldStart0, fieldEnd0, "source");
          long c = problem == null ? parseLong(b, fieldStart1, fieldEnd1, "target") : 0;
          if (problem != null) {
            malformedId(b, line, first);
            return;
          }
          s = first ? longs.indexOrAdd(a) : longs.indexOf(a);
          t = first ? longs.indexOrAdd(c) : longs.indexOf(c);
        }
        case INDEX -> {
          s = parseIndex(b, fieldStart0, fieldEnd0, "source");
          t = problem == null ? parseIndex(b, fieldStart1, fieldEnd1, "target") : 0;
          if (problem != null) {
            malformedId(b, line, first);
            return;
          }
          maxIndex = Math.max(maxIndex, Math.max(s, t));
        }
        default -> throw new AssertionError(idKind);
      }
      if (s < 0 || t < 0) {
        throw changed();
      }
      if (first) {
        edgeLines++;
      }
      visitor.edge(line, s, t);
    }

    /** An integer id that does not parse; on the first data line, perhaps an unexpected header. */
    private void malformedId(byte[] b, long line, boolean first) throws EdgeListFormatException {
      if (notInteger && !dataSeen && !hasHeader()) {
        remedy = EdgeListFormatException.Remedy.HEADER;
      }
      notInteger = false;
      malformed(b, recordStart, recordEndIndex, line, first);
    }

    private void malformed(byte[] b, int start, int end, long line, boolean first)
        throws EdgeListFormatException {
      String reason = problem + ": '" + excerpt(b, start, end) + "'";
      EdgeListFormatException.Remedy fix = remedy;
      String fixValue = remedyValue;
      problem = null;
      remedy = EdgeListFormatException.Remedy.NONE;
      remedyValue = "";
      if (!first) {
        return; // reported in the first pass
      }
      if (!lenient) {
        throw new EdgeListFormatException(file, line, reason, fix, fixValue);
      }
      skippedCount++;
      if (skippedFirst.size() < SkippedLines.MAX_REPORTED) {
        skippedFirst.add(new SkippedLines.Line(line, reason));
      }
    }

    private String excerpt(byte[] b, int start, int end) {
      String s = new String(b, start, end - start, StandardCharsets.UTF_8);
      return s.length() <= EXCERPT_CHARS ? s : s.substring(0, EXCERPT_CHARS) + "...";
    }

    /**
     * Decodes a field as UTF-8, strictly, with {@code ""} read as one quote when {@code escaped};
     * null (with {@link #problem} set) if invalid.
     */
    private String text(byte[] b, int start, int end, boolean escaped) {
      String raw = decode(b, start, end);
      return raw == null || !escaped ? raw : raw.replace("\"\"", "\"");
    }

    private String decode(byte[] b, int start, int end) {
      boolean ascii = true;
      for (int i = start; i < end; i++) {
        if (b[i] < 0) {
          ascii = false;
          break;
        }
      }
      if (ascii) {
        return new String(b, start, end - start, StandardCharsets.US_ASCII);
      }
      try {
        return StandardCharsets.UTF_8
            .newDecoder()
            .onMalformedInput(CodingErrorAction.REPORT)
            .onUnmappableCharacter(CodingErrorAction.REPORT)
            .decode(ByteBuffer.wrap(b, start, end - start))
            .toString();
      } catch (CharacterCodingException e) {
        problem = "an id is not valid UTF-8";
        return null;
      }
    }

    /** Parses a signed decimal long; sets {@link #problem} and returns 0 if it is not one. */
    private long parseLong(byte[] b, int start, int end, String role) {
      int i = start;
      boolean negative = false;
      if (b[i] == '-' || b[i] == '+') {
        negative = b[i] == '-';
        i++;
      }
      if (i == end) {
        problem = "the " + role + " id is not an integer";
        notInteger = true;
        return 0;
      }
      long value = 0; // accumulated negatively to reach Long.MIN_VALUE
      for (; i < end; i++) {
        int d = b[i] - '0';
        if (d < 0 || d > 9) {
          problem =
              "the "
                  + role
                  + " id is not an integer"
                  + (idKind == IdKind.INDEX ? "" : "; use stringIds for text ids");
          notInteger = true;
          return 0;
        }
        if (value < Long.MIN_VALUE / 10) {
          problem = "the " + role + " id does not fit in a 64-bit integer";
          return 0;
        }
        value *= 10;
        if (value < Long.MIN_VALUE + d) {
          problem = "the " + role + " id does not fit in a 64-bit integer";
          return 0;
        }
        value -= d;
      }
      if (!negative) {
        if (value == Long.MIN_VALUE) {
          problem = "the " + role + " id does not fit in a 64-bit integer";
          return 0;
        }
        value = -value;
      }
      return value;
    }

    private int parseIndex(byte[] b, int start, int end, String role) {
      long v = parseLong(b, start, end, role);
      if (problem != null) {
        return 0;
      }
      long limit = nodeCount >= 0 ? nodeCount : CsrAssembler.MAX_ENTRIES;
      if (v < 0 || v >= limit) {
        problem =
            "the "
                + role
                + " id "
                + v
                + " is not a node index: index ids must lie in 0.."
                + (limit - 1)
                + (nodeCount >= 0 ? " (nodeCount = " + nodeCount + ")" : "")
                + "; use integerIds to map arbitrary integers";
        return 0;
      }
      return (int) v;
    }
  }
}
