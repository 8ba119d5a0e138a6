package dev.heed.graph;

import dev.heed.attention.MemoryBudget;
import dev.heed.classify.NodeFeatures;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.channels.FileChannel;
import java.nio.charset.StandardCharsets;
import java.nio.file.AtomicMoveNotSupportedException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.nio.file.StandardCopyOption;
import java.nio.file.StandardOpenOption;
import java.util.Objects;
import java.util.zip.CRC32C;

/**
 * Saves a graph with its node ids and features to one compact binary file, and reads it back, so
 * that a service restarts without rebuilding from its edge list. Writing is crash-safe: the bytes
 * go to a temporary file beside the target ({@code NAME.*.partial}), are forced to disk, and the
 * file is then renamed over the target in one atomic step, so the target is always either the
 * previous complete file or the new complete file. Reading checks every part against its CRC-32C
 * checksum and the file's length against its header, so a torn, truncated or damaged file fails
 * with a {@link SavedGraphFormatException} that says what is wrong, never a wrong graph. A {@code
 * .partial} file left by a crash is not read by anything; delete it.
 *
 * <p>Format (little-endian): a 64-byte header (magic {@code HEEDGRPH}, format version, id kind, n,
 * f, E, version, byte length of the ids, CRC-32C of the header), then the row offsets ({@code
 * int[n+1]}), columns ({@code int[E]}), features ({@code float[n·f]}) and ids (none for index ids,
 * {@code long[n]}, or per node a length and UTF-8 bytes), each followed by its CRC-32C, then a
 * 16-byte trailer (magic {@code HEEDEND!} and the file's length). CRC-32C: Castagnoli, Bräuer,
 * Herrmann, "Optimization of cyclic redundancy-check codes with 24 and 32 parity bits", IEEE Trans.
 * Commun. 1993 (as in iSCSI, RFC 3720).
 *
 * <pre>{@code
 * SavedGraphFile.write(Path.of("graph.heedgraph"), indexed, features, 0);
 * SavedGraph<String> back = SavedGraphFile.readStringIds(Path.of("graph.heedgraph"));
 * }</pre>
 *
 * <p>Cost: O(n·f + n + E) both ways, one sequential pass; reading validates the CSR structure as
 * {@link CsrGraph#of} does and checks the allocations against {@link MemoryBudget}.
 *
 * <p>Thread safety: stateless; concurrent writes to the same target leave one of them complete.
 */
public final class SavedGraphFile {

  /** The format version this class writes and reads. */
  public static final int FORMAT_VERSION = 1;

  static final long MAGIC = 0x4850524744454548L; // "HEEDGRPH" little-endian
  static final long END_MAGIC = 0x21444E4544454548L; // "HEEDEND!" little-endian
  static final int HEADER_BYTES = 64;
  static final int TRAILER_BYTES = 16;

  private static final int KIND_INDEX = 0;
  private static final int KIND_LONG = 1;
  private static final int KIND_STRING = 2;
  private static final int CHUNK_BYTES = 1 << 20;

  private SavedGraphFile() {}

  /**
   * Writes a graph, its node ids and features to {@code target}, replacing it atomically.
   *
   * @param target the file to write; its folder must exist
   * @param graph input, not modified: rows and node index; ids must all be {@code String} or all
   *     {@code Long} (index ids {@code 0..n-1} are stored as nothing)
   * @param features input, not modified: n × f
   * @param version the version to record (a live graph's snapshot version), or 0
   * @throws IOException if writing fails (the target is then unchanged)
   * @throws IllegalArgumentException if the node counts differ, an id is neither a {@code String}
   *     nor a {@code Long}, or the version is negative
   */
  public static void write(Path target, IndexedGraph<?> graph, NodeFeatures features, long version)
      throws IOException {
    Objects.requireNonNull(target, "target");
    SavedGraph<?> saved = new SavedGraph<>(graph, features, version); // checks the parts
    Path folder = target.toAbsolutePath().getParent();
    Path partial = Files.createTempFile(folder, target.getFileName() + ".", ".partial");
    boolean moved = false;
    try {
      try (FileChannel out = FileChannel.open(partial, StandardOpenOption.WRITE)) {
        writeTo(out, saved);
        out.force(true);
      }
      try {
        Files.move(
            partial, target, StandardCopyOption.ATOMIC_MOVE, StandardCopyOption.REPLACE_EXISTING);
      } catch (AtomicMoveNotSupportedException e) {
        throw new IOException(
            "cannot replace " + target + " atomically on this file system; save elsewhere", e);
      }
      moved = true;
      forceFolder(folder);
    } finally {
      if (!moved) {
        Files.deleteIfExists(partial);
      }
    }
  }

  /** Makes the rename durable where the platform allows opening a folder (Linux, macOS). */
  private static void forceFolder(Path folder) {
    try (FileChannel dir = FileChannel.open(folder, StandardOpenOption.READ)) {
      dir.force(true);
    } catch (IOException e) {
      // Windows cannot open a folder as a channel; its rename is durable once it returns
    }
  }

  private static void writeTo(FileChannel out, SavedGraph<?> saved) throws IOException {
    CsrGraph g = saved.graph().graph();
    NodeIndex<?> nodes = saved.graph().nodes();
    NodeFeatures features = saved.features();
    int n = g.nodeCount();
    int f = features.featureCount();
    int kind = idKind(nodes);
    byte[][] stringIds = kind == KIND_STRING ? new byte[n][] : null;
    long idBytes = 0;
    if (kind == KIND_LONG) {
      idBytes = 8L * n;
    } else if (kind == KIND_STRING) {
      for (int i = 0; i < n; i++) {
        stringIds[i] = ((String) nodes.idOf(i)).getBytes(StandardCharsets.UTF_8);
        idBytes += 4 + stringIds[i].length;
      }
    }
    int[] offsets = g.rowOffsets();
    long entries = offsets[n];
    ByteBuffer header = ByteBuffer.allocate(HEADER_BYTES).order(ByteOrder.LITTLE_ENDIAN);
    header.putLong(MAGIC).putInt(FORMAT_VERSION).putInt(kind).putInt(n).putInt(f);
    header.putLong(entries).putLong(saved.version()).putLong(idBytes);
    header.putLong(0).putInt(0); // reserved
    CRC32C crc = new CRC32C();
    crc.update(header.array(), 0, 60);
    header.putInt((int) crc.getValue());
    header.flip();
    writeFully(out, header);

    Sink sink = new Sink(out);
    sink.ints(offsets, 0, n + 1);
    sink.endSection();
    sink.ints(g.columns(), 0, (int) entries);
    sink.endSection();
    float[] row = new float[f];
    for (int i = 0; i < n; i++) {
      features.copyRow(i, row, 0);
      sink.floats(row);
    }
    sink.endSection();
    for (int i = 0; kind != KIND_INDEX && i < n; i++) {
      if (kind == KIND_LONG) {
        sink.putLong((Long) nodes.idOf(i));
      } else {
        sink.putInt(stringIds[i].length);
        sink.bytes(stringIds[i]);
      }
    }
    sink.endSection();
    long total = HEADER_BYTES + sink.written + TRAILER_BYTES;
    sink.putLong(END_MAGIC);
    sink.putLong(total);
    sink.flush();
  }

  private static int idKind(NodeIndex<?> nodes) {
    int n = nodes.size();
    boolean index = true;
    boolean longs = true;
    boolean strings = true;
    for (int i = 0; i < n; i++) {
      Object id = nodes.idOf(i);
      longs &= id instanceof Long;
      strings &= id instanceof String;
      index &= id instanceof Long l && l == i;
    }
    if (index) {
      return KIND_INDEX;
    }
    if (longs) {
      return KIND_LONG;
    }
    if (strings) {
      return KIND_STRING;
    }
    throw new IllegalArgumentException(
        "node ids must all be String or all Long to be saved; convert them first (for example with"
            + " String.valueOf)");
  }

  /**
   * Reads a file written with {@code String} ids.
   *
   * @param file the file
   * @return the graph, ids, features and version
   * @throws SavedGraphFormatException if the file is truncated, damaged, of another format version
   *     or holds other ids (the message says which)
   * @throws IOException if the file cannot be read
   * @throws dev.heed.attention.MemoryBudgetExceededException if it would not fit the heap budget
   */
  @SuppressWarnings("unchecked") // the id kind was checked
  public static SavedGraph<String> readStringIds(Path file) throws IOException {
    SavedGraph<?> saved = read(file, KIND_STRING);
    return (SavedGraph<String>) saved;
  }

  /**
   * Reads a file written with {@code Long} ids (or index ids).
   *
   * @param file the file
   * @return the graph, ids, features and version
   * @throws SavedGraphFormatException if the file is truncated, damaged, of another format version
   *     or holds other ids (the message says which)
   * @throws IOException if the file cannot be read
   * @throws dev.heed.attention.MemoryBudgetExceededException if it would not fit the heap budget
   */
  @SuppressWarnings("unchecked") // the id kind was checked
  public static SavedGraph<Long> readLongIds(Path file) throws IOException {
    SavedGraph<?> saved = read(file, KIND_LONG);
    return (SavedGraph<Long>) saved;
  }

  private static SavedGraph<?> read(Path file, int wantedKind) throws IOException {
    Objects.requireNonNull(file, "file");
    try (FileChannel in = FileChannel.open(file, StandardOpenOption.READ)) {
      long size = in.size();
      if (size < HEADER_BYTES + TRAILER_BYTES) {
        throw new SavedGraphFormatException(
            file, "only " + size + " bytes, shorter than a header; truncated or not a saved graph");
      }
      ByteBuffer header = ByteBuffer.allocate(HEADER_BYTES).order(ByteOrder.LITTLE_ENDIAN);
      readFully(in, header, file);
      header.flip();
      if (header.getLong(0) != MAGIC) {
        throw new SavedGraphFormatException(file, "not a saved graph (no HEEDGRPH magic)");
      }
      CRC32C crc = new CRC32C();
      crc.update(header.array(), 0, 60);
      if (header.getInt(60) != (int) crc.getValue()) {
        throw new SavedGraphFormatException(file, "the header's checksum does not match; damaged");
      }
      int version = header.getInt(8);
      if (version != FORMAT_VERSION) {
        throw new SavedGraphFormatException(
            file,
            "format version "
                + version
                + ", but this version of Heed reads "
                + FORMAT_VERSION
                + "; save it again with this version");
      }
      int kind = header.getInt(12);
      int n = header.getInt(16);
      int f = header.getInt(20);
      long entries = header.getLong(24);
      long snapshotVersion = header.getLong(32);
      long idBytes = header.getLong(40);
      if (kind < KIND_INDEX
          || kind > KIND_STRING
          || n < 0
          || f < 1
          || entries < 0
          || idBytes < 0
          || entries > Integer.MAX_VALUE - 8
          || snapshotVersion < 0) {
        throw new SavedGraphFormatException(file, "the header holds impossible values; damaged");
      }
      boolean stringKind = kind == KIND_STRING;
      if (stringKind != (wantedKind == KIND_STRING)) {
        throw new SavedGraphFormatException(
            file,
            "holds "
                + (stringKind ? "String" : "Long")
                + " ids; read it with read"
                + (stringKind ? "StringIds" : "LongIds"));
      }
      long expected =
          HEADER_BYTES
              + 4L * (n + 1)
              + 4
              + 4L * entries
              + 4
              + 4L * n * f
              + 4
              + idBytes
              + 4
              + TRAILER_BYTES;
      if (size != expected) {
        throw new SavedGraphFormatException(
            file,
            size
                + " bytes, but its header describes "
                + expected
                + (size < expected
                    ? "; the file is truncated (torn by a crash during a copy?)"
                    : "; bytes follow its end"));
      }
      MemoryBudget.check(
          file + ": saved graph (" + n + " nodes, " + entries + " entries, " + f + " features)",
          4L * (n + 1) + 4L * entries + 8L * n * f + 2 * idBytes + 16L * n);
      Source source = new Source(in, file);
      int[] offsets = new int[n + 1];
      source.ints(offsets);
      source.endSection("row offsets");
      int[] columns = new int[(int) entries];
      source.ints(columns);
      source.endSection("columns");
      float[] values = new float[n * f];
      source.floats(values);
      source.endSection("features");
      NodeIndex<?> nodes;
      if (kind == KIND_INDEX) {
        nodes = LongNodeIndex.identity(n);
      } else if (kind == KIND_LONG) {
        LongIdTable table = new LongIdTable(n);
        for (int i = 0; i < n; i++) {
          if (table.indexOrAdd(source.getLong()) != i) {
            throw new SavedGraphFormatException(file, "node id " + i + " repeats an earlier id");
          }
        }
        nodes = table.freeze();
      } else {
        ObjectIdTable<String> table = new ObjectIdTable<>(n);
        for (int i = 0; i < n; i++) {
          int length = source.getInt();
          if (length < 0 || length > idBytes) {
            throw new SavedGraphFormatException(file, "node id " + i + " has an impossible length");
          }
          String id = new String(source.bytes(length), StandardCharsets.UTF_8);
          if (table.indexOrAdd(id) != i) {
            throw new SavedGraphFormatException(file, "node id " + i + " repeats an earlier id");
          }
        }
        nodes = table.freeze();
      }
      source.endSection("node ids");
      if (source.getLong() != END_MAGIC || source.getLong() != size) {
        throw new SavedGraphFormatException(file, "the trailer is missing or wrong; damaged");
      }
      CsrGraph graph;
      NodeFeatures features;
      try {
        graph = CsrGraph.of(offsets, columns);
        features = NodeFeatures.ofRowMajor(values, n, f);
      } catch (IllegalArgumentException e) {
        throw new SavedGraphFormatException(
            file, "checksums match but the contents are invalid: " + e.getMessage());
      }
      return new SavedGraph<>(new IndexedGraph<>(graph, nodes), features, snapshotVersion);
    }
  }

  private static void writeFully(FileChannel out, ByteBuffer b) throws IOException {
    while (b.hasRemaining()) {
      out.write(b);
    }
  }

  private static void readFully(FileChannel in, ByteBuffer b, Path file) throws IOException {
    while (b.hasRemaining()) {
      if (in.read(b) < 0) {
        throw new SavedGraphFormatException(file, "ends early; truncated");
      }
    }
  }

  /** Buffered little-endian writer with a running CRC per section. */
  private static final class Sink {
    private final FileChannel out;
    private final ByteBuffer buffer =
        ByteBuffer.allocate(CHUNK_BYTES).order(ByteOrder.LITTLE_ENDIAN);
    private final CRC32C crc = new CRC32C();
    long written;

    Sink(FileChannel out) {
      this.out = out;
    }

    private void room(int bytes) throws IOException {
      if (buffer.remaining() < bytes) {
        drain();
      }
    }

    private void drain() throws IOException {
      buffer.flip();
      crc.update(buffer.duplicate());
      written += buffer.remaining();
      writeFully(out, buffer);
      buffer.clear();
    }

    void ints(int[] values, int from, int to) throws IOException {
      for (int i = from; i < to; ) {
        room(4);
        int count = Math.min(to - i, buffer.remaining() / 4);
        buffer.asIntBuffer().put(values, i, count);
        buffer.position(buffer.position() + 4 * count);
        i += count;
      }
    }

    void floats(float[] values) throws IOException {
      for (int i = 0; i < values.length; ) {
        room(4);
        int count = Math.min(values.length - i, buffer.remaining() / 4);
        buffer.asFloatBuffer().put(values, i, count);
        buffer.position(buffer.position() + 4 * count);
        i += count;
      }
    }

    void bytes(byte[] values) throws IOException {
      for (int i = 0; i < values.length; ) {
        room(1);
        int count = Math.min(values.length - i, buffer.remaining());
        buffer.put(values, i, count);
        i += count;
      }
    }

    void putInt(int v) throws IOException {
      room(4);
      buffer.putInt(v);
    }

    void putLong(long v) throws IOException {
      room(8);
      buffer.putLong(v);
    }

    /** Ends a section: writes the CRC of its bytes (not itself counted in the next section). */
    void endSection() throws IOException {
      drain();
      int value = (int) crc.getValue();
      crc.reset();
      buffer.putInt(value);
      buffer.flip();
      written += 4;
      writeFully(out, buffer);
      buffer.clear();
    }

    void flush() throws IOException {
      buffer.flip();
      written += buffer.remaining();
      writeFully(out, buffer);
      buffer.clear();
    }
  }

  /** Buffered little-endian reader with a running CRC per section. */
  private static final class Source {
    private final FileChannel in;
    private final Path file;
    private final ByteBuffer buffer =
        ByteBuffer.allocate(CHUNK_BYTES).order(ByteOrder.LITTLE_ENDIAN);
    private final CRC32C crc = new CRC32C();

    Source(FileChannel in, Path file) {
      this.in = in;
      this.file = file;
      buffer.limit(0);
    }

    /** Makes at least {@code bytes} available, adding what is consumed to the CRC first. */
    private void need(int bytes) throws IOException {
      if (buffer.remaining() >= bytes) {
        return;
      }
      buffer.compact();
      while (buffer.position() < bytes) {
        if (in.read(buffer) < 0) {
          throw new SavedGraphFormatException(file, "ends early; truncated");
        }
      }
      buffer.flip();
    }

    private void consumed(int from, int bytes) {
      crc.update(buffer.array(), from, bytes);
    }

    void ints(int[] into) throws IOException {
      for (int i = 0; i < into.length; ) {
        need(4);
        int count = Math.min(into.length - i, buffer.remaining() / 4);
        int at = buffer.position();
        buffer.asIntBuffer().get(into, i, count);
        buffer.position(at + 4 * count);
        consumed(at, 4 * count);
        i += count;
      }
    }

    void floats(float[] into) throws IOException {
      for (int i = 0; i < into.length; ) {
        need(4);
        int count = Math.min(into.length - i, buffer.remaining() / 4);
        int at = buffer.position();
        buffer.asFloatBuffer().get(into, i, count);
        buffer.position(at + 4 * count);
        consumed(at, 4 * count);
        i += count;
      }
    }

    byte[] bytes(int length) throws IOException {
      byte[] into = new byte[length];
      for (int i = 0; i < length; ) {
        need(1);
        int count = Math.min(length - i, buffer.remaining());
        int at = buffer.position();
        buffer.get(into, i, count);
        consumed(at, count);
        i += count;
      }
      return into;
    }

    int getInt() throws IOException {
      need(4);
      int at = buffer.position();
      int v = buffer.getInt();
      consumed(at, 4);
      return v;
    }

    long getLong() throws IOException {
      need(8);
      int at = buffer.position();
      long v = buffer.getLong();
      consumed(at, 8);
      return v;
    }

    /** Reads the stored CRC of the section just read and compares it. */
    void endSection(String what) throws IOException {
      int computed = (int) crc.getValue();
      need(4);
      int stored = buffer.getInt();
      crc.reset();
      if (stored != computed) {
        throw new SavedGraphFormatException(
            file, "the checksum of the " + what + " does not match; the file is damaged");
      }
    }
  }
}
