package dev.heed.npy;

import java.io.BufferedInputStream;
import java.io.ByteArrayInputStream;
import java.io.ByteArrayOutputStream;
import java.io.FilterInputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.file.Files;
import java.nio.file.Path;
import java.time.LocalDateTime;
import java.util.LinkedHashMap;
import java.util.Map;
import java.util.Objects;
import java.util.zip.CRC32;
import java.util.zip.ZipEntry;
import java.util.zip.ZipException;
import java.util.zip.ZipInputStream;
import java.util.zip.ZipOutputStream;

/**
 * Reads and writes NumPy {@code .npz} archives (a zip file of {@code .npy} entries, as written by
 * {@code numpy.savez} and {@code numpy.savez_compressed}), treating every input as untrusted.
 *
 * <p>Reading holds the raw archive in memory (at most {@link NpyLimits#maxTotalBytes()} bytes),
 * walks its local entries once, then checks that the end-of-central-directory record is present and
 * lists as many entries as were found (so a truncated file is rejected, not half read). Entries may
 * be stored or deflated. Each {@code .npy} entry is validated as {@link Npy} describes; other
 * entries are returned as raw bytes. Limits ({@link NpyLimits}) are enforced before allocation: an
 * entry whose declared size, or whose {@code .npy} header, exceeds what remains of the limits is
 * rejected before its data is read, and every inflated byte actually produced is counted, so an
 * archive that inflates beyond {@link NpyLimits#maxTotalBytes()} (a "zip bomb") stops as soon as it
 * crosses the limit. Entry CRCs are checked. Duplicate names, directory entries, absolute paths and
 * names containing {@code ..} are rejected.
 *
 * <p>Writing is deterministic: entries in the given order, all <em>stored</em> (not compressed, as
 * {@code numpy.savez} does; deflate output may differ between zlib versions, stored bytes never
 * do), each stamped 1980-01-01 00:00:00 (the earliest zip time, also Python's {@code zipfile}
 * default), no comments or extra fields. So read → write → read gives equal contents, and writing
 * the same contents twice gives identical bytes.
 *
 * <p>Cost: O(archive size); memory about twice the largest entry plus the returned arrays.
 *
 * <p>Thread safety: stateless; safe from any thread.
 */
public final class Npz {

  /** The timestamp written on every entry: the start of the zip (MS-DOS) epoch. */
  static final LocalDateTime ENTRY_TIME = LocalDateTime.of(1980, 1, 1, 0, 0, 0);

  private static final String NPY_SUFFIX = ".npy";

  private Npz() {}

  /**
   * Reads an archive from a file with the default limits.
   *
   * @param file the {@code .npz} file
   * @return the contents
   * @throws NpyFormatException if the archive or an entry is malformed, not accepted or over a
   *     limit (the message names the entry)
   * @throws IOException if the file cannot be read
   */
  public static NpzContents read(Path file) throws IOException {
    return read(file, NpyLimits.defaults());
  }

  /**
   * Reads an archive from a file.
   *
   * @param file the {@code .npz} file
   * @param limits size limits
   * @return the contents
   * @throws NpyFormatException if the archive or an entry is malformed, not accepted or over a
   *     limit
   * @throws IOException if the file cannot be read
   */
  public static NpzContents read(Path file, NpyLimits limits) throws IOException {
    Objects.requireNonNull(file, "file");
    try (InputStream in = new BufferedInputStream(Files.newInputStream(file))) {
      return read(in, file.toString(), limits);
    }
  }

  /**
   * Reads an archive from a stream, which is read to its end and not closed.
   *
   * @param in the stream
   * @param name a name for the archive, used in error messages
   * @param limits size limits
   * @return the contents
   * @throws NpyFormatException if the archive or an entry is malformed, not accepted or over a
   *     limit; the message names {@code name:entry}
   * @throws IOException if the stream fails
   */
  public static NpzContents read(InputStream in, String name, NpyLimits limits) throws IOException {
    Objects.requireNonNull(in, "in");
    Objects.requireNonNull(name, "name");
    Objects.requireNonNull(limits, "limits");
    // The whole archive is held (bounded by the limit) so that its end can be checked: a file cut
    // after its last entry would otherwise look complete to a streaming reader.
    byte[] archive =
        in.readNBytes((int) Math.min(limits.maxTotalBytes() + 1, NpyLimits.MAX_JAVA_ARRAY_BYTES));
    if (archive.length > limits.maxTotalBytes()) {
      throw new NpyFormatException(
          name, "archive is larger than the limit of " + limits.maxTotalBytes() + " bytes");
    }
    Map<String, NpyArray> arrays = new LinkedHashMap<>();
    Map<String, byte[]> others = new LinkedHashMap<>();
    long[] inflated = {0};
    int entries = 0;
    String current = name;
    ZipInputStream zip = new ZipInputStream(new ByteArrayInputStream(archive));
    try {
      ZipEntry entry;
      while ((entry = nextEntry(zip, current)) != null) {
        String entryName = entry.getName();
        current = name + ":" + entryName;
        entries++;
        if (entries > limits.maxEntries()) {
          throw new NpyFormatException(
              current, "archive holds more than the limit of " + limits.maxEntries() + " entries");
        }
        checkEntryName(entryName, current);
        long remaining = limits.maxTotalBytes() - inflated[0];
        long declared = entry.getSize();
        if (declared > remaining) {
          throw new NpyFormatException(
              current,
              "entry declares "
                  + declared
                  + " uncompressed bytes, more than the "
                  + remaining
                  + " bytes left of the archive limit of "
                  + limits.maxTotalBytes());
        }
        InputStream entryIn = new Counting(zip, inflated, limits.maxTotalBytes(), current);
        if (entryName.endsWith(NPY_SUFFIX)) {
          String key = entryName.substring(0, entryName.length() - NPY_SUFFIX.length());
          if (arrays.containsKey(key)) {
            throw new NpyFormatException(current, "duplicate entry name");
          }
          NpyArray array = readNpyEntry(entryIn, current, limits, declared, remaining);
          arrays.put(key, array);
        } else {
          if (others.containsKey(entryName)) {
            throw new NpyFormatException(current, "duplicate entry name");
          }
          long cap = Math.min(remaining, limits.maxArrayBytes());
          byte[] bytes =
              entryIn.readNBytes((int) Math.min(cap + 1, NpyLimits.MAX_JAVA_ARRAY_BYTES));
          if (bytes.length > cap) {
            throw new NpyFormatException(
                current, "entry is larger than the limit of " + cap + " bytes");
          }
          others.put(entryName, bytes);
        }
        zip.closeEntry();
      }
    } catch (ZipException e) {
      throw new NpyFormatException(current, "not a valid zip archive: " + e.getMessage(), e);
    } catch (java.io.EOFException e) {
      throw new NpyFormatException(current, "archive is truncated: " + e.getMessage(), e);
    }
    if (entries == 0) {
      throw new NpyFormatException(name, "holds no entries (empty file, or not a zip archive)");
    }
    int declaredEntries = centralDirectoryEntryCount(archive, name);
    if (declaredEntries != ZIP64_COUNT && declaredEntries != entries) {
      throw new NpyFormatException(
          name,
          "the central directory lists "
              + declaredEntries
              + " entries but "
              + entries
              + " were found; the archive is truncated or damaged");
    }
    return new NpzContents(arrays, others);
  }

  /**
   * The next entry's header. {@link ZipInputStream} decodes names as UTF-8 and throws an unchecked
   * exception for bytes that are not; that is a malformed archive here, not a bug.
   */
  private static ZipEntry nextEntry(ZipInputStream zip, String after) throws IOException {
    try {
      return zip.getNextEntry();
    } catch (IllegalArgumentException e) {
      throw new NpyFormatException(
          after, "the next entry's name is not valid UTF-8: " + e.getMessage(), e);
    }
  }

  private static final int EOCD_SIGNATURE = 0x06054b50;
  private static final int EOCD_LENGTH = 22;
  private static final int ZIP64_COUNT = 0xFFFF;

  /**
   * Finds the end-of-central-directory record (PKWARE APPNOTE.TXT §4.3.16) and returns its total
   * entry count, or throws if there is none (a truncated or non-zip file).
   */
  private static int centralDirectoryEntryCount(byte[] archive, String name)
      throws NpyFormatException {
    ByteBuffer b = ByteBuffer.wrap(archive).order(ByteOrder.LITTLE_ENDIAN);
    int lowest = Math.max(0, archive.length - EOCD_LENGTH - 0xFFFF);
    for (int at = archive.length - EOCD_LENGTH; at >= lowest; at--) {
      if (b.getInt(at) == EOCD_SIGNATURE
          && at + EOCD_LENGTH + (b.getShort(at + 20) & 0xFFFF) == archive.length) {
        return b.getShort(at + 10) & 0xFFFF;
      }
    }
    throw new NpyFormatException(
        name,
        "no end-of-central-directory record: not a zip archive, or truncated ("
            + archive.length
            + " bytes)");
  }

  private static NpyArray readNpyEntry(
      InputStream in, String current, NpyLimits limits, long declared, long remaining)
      throws IOException {
    // The header is small; check the data it announces against what is left before reading it.
    Npy.Header header = Npy.readHeader(in, current);
    long dataBytes = header.dataBytes(current);
    if (dataBytes > remaining - header.headerBytes()) {
      throw new NpyFormatException(
          current,
          "header announces "
              + dataBytes
              + " data bytes, more than the "
              + Math.max(0, remaining - header.headerBytes())
              + " bytes left of the archive limit of "
              + limits.maxTotalBytes());
    }
    return Npy.readData(in, current, limits, declared, header);
  }

  private static void checkEntryName(String entryName, String current) throws NpyFormatException {
    if (entryName.isEmpty()
        || entryName.endsWith("/")
        || entryName.startsWith("/")
        || entryName.contains("\\")
        || entryName.equals("..")
        || entryName.startsWith("../")
        || entryName.contains("/../")
        || entryName.endsWith("/..")) {
      throw new NpyFormatException(
          current, "entry name is empty, a directory, absolute or contains '..'");
    }
    for (int i = 0; i < entryName.length(); i++) {
      if (Character.isISOControl(entryName.charAt(i))) {
        throw new NpyFormatException(current, "entry name contains a control character");
      }
    }
  }

  /**
   * Writes an archive of arrays only, each as entry {@code key + ".npy"}, to a file.
   *
   * @param arrays the arrays in entry order; keys are entry names without the suffix
   * @param file the destination, replaced if present
   * @throws IOException if writing fails
   * @throws IllegalArgumentException if a key is not a safe entry name
   */
  public static void write(Map<String, NpyArray> arrays, Path file) throws IOException {
    Objects.requireNonNull(file, "file");
    Files.write(file, toBytes(Map.of(), arrays));
  }

  /**
   * Returns the bytes of an archive holding {@code otherEntries} (raw, under their own names)
   * followed by {@code arrays} (as {@code key + ".npy"}), in iteration order. Deterministic; see
   * the class comment.
   *
   * @param otherEntries raw entries, not modified; names must not end in {@code .npy}
   * @param arrays the arrays; keys are entry names without the suffix
   * @return the archive's bytes
   * @throws IllegalArgumentException if a name is unsafe, duplicated or misplaced
   */
  public static byte[] toBytes(Map<String, byte[]> otherEntries, Map<String, NpyArray> arrays) {
    Objects.requireNonNull(otherEntries, "otherEntries");
    Objects.requireNonNull(arrays, "arrays");
    ByteArrayOutputStream buffer = new ByteArrayOutputStream();
    try (ZipOutputStream zip = new ZipOutputStream(buffer)) {
      for (Map.Entry<String, byte[]> e : otherEntries.entrySet()) {
        if (e.getKey().endsWith(NPY_SUFFIX)) {
          throw new IllegalArgumentException(
              "raw entry '" + e.getKey() + "' must not end in .npy; pass it as an array");
        }
        putStored(zip, e.getKey(), e.getValue());
      }
      for (Map.Entry<String, NpyArray> e : arrays.entrySet()) {
        putStored(zip, e.getKey() + NPY_SUFFIX, Npy.toBytes(e.getValue()));
      }
    } catch (IOException e) {
      throw new IllegalStateException("writing to memory failed", e);
    }
    return buffer.toByteArray();
  }

  /**
   * Writes the archive that {@link #toBytes} describes to a stream, which is not closed.
   *
   * @param otherEntries raw entries
   * @param arrays the arrays
   * @param out the destination
   * @throws IOException if writing fails
   */
  public static void write(
      Map<String, byte[]> otherEntries, Map<String, NpyArray> arrays, OutputStream out)
      throws IOException {
    Objects.requireNonNull(out, "out");
    out.write(toBytes(otherEntries, arrays));
  }

  private static void putStored(ZipOutputStream zip, String name, byte[] bytes) throws IOException {
    try {
      checkEntryName(name, name);
    } catch (NpyFormatException e) {
      throw new IllegalArgumentException(e.getMessage(), e);
    }
    ZipEntry entry = new ZipEntry(name);
    entry.setMethod(ZipEntry.STORED);
    entry.setTimeLocal(ENTRY_TIME);
    entry.setSize(bytes.length);
    entry.setCompressedSize(bytes.length);
    CRC32 crc = new CRC32();
    crc.update(bytes);
    entry.setCrc(crc.getValue());
    try {
      zip.putNextEntry(entry);
    } catch (ZipException e) {
      throw new IllegalArgumentException("cannot write entry '" + name + "': " + e.getMessage(), e);
    }
    zip.write(bytes);
    zip.closeEntry();
  }

  /** Counts inflated bytes across all entries and stops at the archive limit. */
  private static final class Counting extends FilterInputStream {
    private final long[] total;
    private final long limit;
    private final String current;

    Counting(InputStream in, long[] total, long limit, String current) {
      super(in);
      this.total = total;
      this.limit = limit;
      this.current = current;
    }

    @Override
    public int read() throws IOException {
      int b = super.read();
      if (b >= 0) {
        count(1);
      }
      return b;
    }

    @Override
    public int read(byte[] b, int off, int len) throws IOException {
      int n = super.read(b, off, len);
      if (n > 0) {
        count(n);
      }
      return n;
    }

    @Override
    public void close() {
      // the zip stream stays open for the next entry
    }

    private void count(int n) throws NpyFormatException {
      total[0] += n;
      if (total[0] > limit) {
        throw new NpyFormatException(
            current,
            "archive inflates to more than the limit of "
                + limit
                + " bytes (a zip bomb, or raise NpyLimits.maxTotalBytes)");
      }
    }
  }
}
