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
 * <p><b>Lines.</b> Line numbers count every line from 1. Blank lines and lines starting with the
 * comment prefix (after leading spaces; default {@value #DEFAULT_COMMENT_PREFIX}) carry no edge and
 * are passed over. With {@link #header(boolean) header(true)} the first other line is a header and
 * is passed over. Every other line must have exactly two non-empty fields; spaces around fields are
 * removed. There is no quoting: a field is taken as it stands, so ids cannot contain the delimiter.
 * A line that breaks these rules fails the build with an {@link EdgeListFormatException} naming the
 * file, the line number and the fault; in {@link #lenient(boolean) lenient} mode it is skipped
 * instead and reported in {@link EdgeListResult#skipped()} (a count plus the first {@value
 * SkippedLines#MAX_REPORTED} line numbers and reasons). Nothing is skipped silently.
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
 * <p>Defaults: {@link #DEFAULT_DELIMITER}, {@link #DEFAULT_COMMENT_PREFIX}, no header, strict (not
 * lenient), {@link #DEFAULT_SELF_LOOPS}, {@link #DEFAULT_DIRECTION}, {@link #DEFAULT_DUPLICATES}.
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
   * @throws IllegalArgumentException if an edge is repeated under {@link DuplicatePolicy#REJECT}
   *     (naming the edge by its ids and both line numbers)
   */
  @SuppressWarnings("unchecked") // the id kind was fixed by the typed entry point
  public EdgeListResult<V> build() throws IOException {
    if (!commentPrefix.isEmpty() && commentPrefix.indexOf(delimiter) == 0 && delimiter != ' ') {
      throw new IllegalArgumentException(
          "the comment prefix '" + commentPrefix + "' starts with the delimiter; choose another");
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
    private long size;
    private FileTime modified;

    // Per-line parse results.
    private int fieldStart0;
    private int fieldEnd0;
    private int fieldStart1;
    private int fieldEnd1;
    private String problem;

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
      int pos = 0; // start of the current line
      long line = 0;
      boolean headerPending = header;
      boolean eof = false;
      try (InputStream in = Files.newInputStream(file)) {
        while (true) {
          int newline = -1;
          for (int i = pos; i < length; i++) {
            if (buf[i] == '\n') {
              newline = i;
              break;
            }
          }
          int end;
          int next;
          if (newline >= 0) {
            end = newline;
            next = newline + 1;
          } else if (!eof) {
            // Move the partial line to the front, grow if it fills the buffer, read more.
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
            }
            continue;
          } else if (pos < length) {
            end = length;
            next = length;
          } else {
            break;
          }
          line++;
          if (end > pos && buf[end - 1] == '\r') {
            end--;
          }
          int kind = classify(buf, pos, end, headerPending);
          if (kind == LINE_HEADER) {
            headerPending = false;
          } else if (kind == LINE_EDGE) {
            edge(visitor, buf, line, first);
          } else if (kind == LINE_MALFORMED) {
            malformed(buf, pos, end, line, first);
          }
          pos = next;
        }
      }
      if (!first
          && (Files.size(file) != size || !Files.getLastModifiedTime(file).equals(modified))) {
        throw changed();
      }
    }

    private IOException changed() {
      return new IOException(
          "file "
              + file
              + " changed while the graph was being built from it (it is read twice); build from"
              + " a file that is not being written");
    }

    private static final int LINE_SKIP = 0;
    private static final int LINE_HEADER = 1;
    private static final int LINE_EDGE = 2;
    private static final int LINE_MALFORMED = 3;

    /** Splits a line into two trimmed fields, or says why it is not an edge line. */
    private int classify(byte[] b, int start, int end, boolean headerPending) {
      int s = skipBlanks(b, start, end);
      if (s == end) {
        return LINE_SKIP;
      }
      if (!commentPrefix.isEmpty() && startsWith(b, s, end, commentPrefix)) {
        return LINE_SKIP;
      }
      if (headerPending) {
        return LINE_HEADER;
      }
      int e = trimEnd(b, s, end);
      int split = findDelimiter(b, s, e);
      if (split < 0) {
        problem =
            "expected two fields separated by "
                + delimiterName()
                + ", found one; is the delimiter right?";
        return LINE_MALFORMED;
      }
      fieldStart0 = s;
      fieldEnd0 = trimEnd(b, s, split);
      int afterDelimiter = delimiter == ' ' ? skipBlanks(b, split, e) : split + 1;
      fieldStart1 = skipBlanks(b, afterDelimiter, e);
      fieldEnd1 = e;
      int extra = findDelimiter(b, fieldStart1, fieldEnd1);
      if (extra >= 0) {
        problem =
            "expected two fields separated by "
                + delimiterName()
                + ", found more; extra columns (weights, labels) are not read";
        return LINE_MALFORMED;
      }
      if (fieldEnd0 == fieldStart0) {
        problem = "the source id (field 1) is empty";
        return LINE_MALFORMED;
      }
      if (fieldEnd1 == fieldStart1) {
        problem = "the target id (field 2) is empty";
        return LINE_MALFORMED;
      }
      return LINE_EDGE;
    }

    private String delimiterName() {
      return switch (delimiter) {
        case ',' -> "',' (CSV)";
        case '\t' -> "a tab (TSV)";
        case ' ' -> "spaces";
        default -> "'" + delimiter + "'";
      };
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

    private int findDelimiter(byte[] b, int from, int end) {
      for (int i = from; i < end; i++) {
        byte c = b[i];
        if (c == delimiter || (delimiter == ' ' && c == '\t')) {
          return i;
        }
      }
      return -1;
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
          String a = text(b, fieldStart0, fieldEnd0);
          String c = a == null ? null : text(b, fieldStart1, fieldEnd1);
          if (c == null) {
            malformed(b, fieldStart0, fieldEnd1, line, first);
            return;
          }
          s = first ? strings.indexOrAdd(a) : strings.indexOf(a);
          t = first ? strings.indexOrAdd(c) : strings.indexOf(c);
        }
        case MAPPED_INTEGER -> {
          long a = parseLong(b, fieldStart0, fieldEnd0, "source");
          long c = problem == null ? parseLong(b, fieldStart1, fieldEnd1, "target") : 0;
          if (problem != null) {
            malformed(b, fieldStart0, fieldEnd1, line, first);
            return;
          }
          s = first ? longs.indexOrAdd(a) : longs.indexOf(a);
          t = first ? longs.indexOrAdd(c) : longs.indexOf(c);
        }
        case INDEX -> {
          s = parseIndex(b, fieldStart0, fieldEnd0, "source");
          t = problem == null ? parseIndex(b, fieldStart1, fieldEnd1, "target") : 0;
          if (problem != null) {
            malformed(b, fieldStart0, fieldEnd1, line, first);
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

    private void malformed(byte[] b, int start, int end, long line, boolean first)
        throws EdgeListFormatException {
      String reason = problem + ": '" + excerpt(b, start, end) + "'";
      problem = null;
      if (!first) {
        return; // reported in the first pass
      }
      if (!lenient) {
        throw new EdgeListFormatException(file, line, reason);
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

    /** Decodes a field as UTF-8, strictly; null (with {@link #problem} set) if invalid. */
    private String text(byte[] b, int start, int end) {
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
