package dev.heed.npy;

import dev.heed.attention.MemoryBudget;
import java.io.BufferedInputStream;
import java.io.ByteArrayOutputStream;
import java.io.IOException;
import java.io.InputStream;
import java.io.OutputStream;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.List;
import java.util.Objects;

/**
 * Reads and writes single NumPy {@code .npy} arrays, treating every input as untrusted. Nothing
 * here calls ND4J's own reader (which can abort the JVM on some headers).
 *
 * <p>Accepted on reading:
 *
 * <ul>
 *   <li>magic {@code \x93NUMPY}, format versions 1.0, 2.0 and 3.0 (header length as a 16-bit or
 *       32-bit little-endian count; latin-1 header text, UTF-8 for 3.0); headers up to {@link
 *       #MAX_HEADER_BYTES};
 *   <li>a header dictionary with exactly the keys {@code 'descr'}, {@code 'fortran_order'} and
 *       {@code 'shape'}, written as a Python literal;
 *   <li>the element types of {@link NpyDataType} (little-endian {@code <f4 <f8 <i4 <i8});
 *   <li>C order only: {@code 'fortran_order': True} is <em>rejected</em>, not transposed (save
 *       {@code numpy.ascontiguousarray(a)} instead);
 *   <li>dimensions from 0 to {@code Integer.MAX_VALUE} whose data fits the {@link NpyLimits};
 *   <li>a data section of exactly {@code product(shape) * itemsize} bytes, nothing after it.
 * </ul>
 *
 * <p>Rejected with an {@link NpyFormatException} naming the entry: bad magic, unknown version,
 * malformed or oversized header, missing or extra keys, big-endian or any other type
 * (object/pickled arrays are never read), negative or overflowing shapes, truncated or over-long
 * data. A header's shape is checked against the limits, and against the file size when it is known,
 * before any data buffer is allocated; data is read in small chunks, so memory grows only with the
 * bytes that actually arrive.
 *
 * <p>Writing produces format version 1.0 (2.0 if the header would exceed 65,535 bytes) with the
 * header padded by spaces so that the data starts at a multiple of 64 bytes, as NumPy does. Output
 * is a pure function of the array: read → write → read returns an equal array and rewriting gives
 * identical bytes.
 *
 * <p>Cost: O(header + data) time; memory about twice the data size while reading.
 *
 * <p>Thread safety: stateless; safe from any thread.
 */
public final class Npy {

  /** The six magic bytes that start every {@code .npy} file. */
  static final byte[] MAGIC = {(byte) 0x93, 'N', 'U', 'M', 'P', 'Y'};

  /** Largest header accepted, in bytes (NumPy's own headers are a few hundred bytes). */
  public static final int MAX_HEADER_BYTES = 65_536;

  private static final int ALIGNMENT = 64;

  private Npy() {}

  /**
   * Reads one array from a {@code .npy} file with the default limits.
   *
   * @param file the file
   * @return the array
   * @throws NpyFormatException if the file is malformed or not accepted (see the class comment)
   * @throws IOException if the file cannot be read
   * @throws dev.heed.attention.MemoryBudgetExceededException if the data would not fit the heap
   *     budget ({@link dev.heed.attention.MemoryBudget})
   */
  public static NpyArray read(Path file) throws IOException {
    return read(file, NpyLimits.defaults());
  }

  /**
   * Reads one array from a {@code .npy} file.
   *
   * @param file the file
   * @param limits size limits
   * @return the array
   * @throws NpyFormatException if the file is malformed, not accepted or over a limit
   * @throws IOException if the file cannot be read
   * @throws dev.heed.attention.MemoryBudgetExceededException if the data would not fit the heap
   *     budget ({@link dev.heed.attention.MemoryBudget})
   */
  public static NpyArray read(Path file, NpyLimits limits) throws IOException {
    Objects.requireNonNull(file, "file");
    Objects.requireNonNull(limits, "limits");
    long size = Files.size(file);
    try (InputStream in = new BufferedInputStream(Files.newInputStream(file))) {
      return read(in, file.toString(), limits, size);
    }
  }

  /**
   * Reads one array from a stream that holds exactly one {@code .npy} file. The stream is read to
   * its end and not closed.
   *
   * @param in the stream
   * @param name a name for the input, used in error messages
   * @param limits size limits
   * @return the array
   * @throws NpyFormatException if the input is malformed, not accepted, over a limit, or has bytes
   *     after the data
   * @throws IOException if the stream fails
   */
  public static NpyArray read(InputStream in, String name, NpyLimits limits) throws IOException {
    Objects.requireNonNull(in, "in");
    Objects.requireNonNull(name, "name");
    Objects.requireNonNull(limits, "limits");
    return read(in, name, limits, -1);
  }

  /**
   * Reads one array; {@code knownSize} is the total byte count of the input when known, else -1.
   */
  static NpyArray read(InputStream in, String name, NpyLimits limits, long knownSize)
      throws IOException {
    return readData(in, name, limits, knownSize, readHeader(in, name));
  }

  /** Reads and checks the data section that follows a validated header. */
  static NpyArray readData(
      InputStream in, String name, NpyLimits limits, long knownSize, Header header)
      throws IOException {
    long dataBytes = header.dataBytes(name);
    if (dataBytes > limits.maxArrayBytes()) {
      throw new NpyFormatException(
          name,
          "shape "
              + Arrays.toString(header.shape)
              + " of "
              + header.type.descriptor()
              + " needs "
              + dataBytes
              + " bytes, more than the limit of "
              + limits.maxArrayBytes()
              + " bytes per array");
    }
    if (knownSize >= 0 && knownSize - header.headerBytes != dataBytes) {
      throw new NpyFormatException(
          name,
          "data length mismatch: shape "
              + Arrays.toString(header.shape)
              + " of "
              + header.type.descriptor()
              + " needs "
              + dataBytes
              + " bytes but the input holds "
              + (knownSize - header.headerBytes)
              + " bytes after the header"
              + (knownSize - header.headerBytes < dataBytes ? " (truncated file?)" : ""));
    }
    if (knownSize >= 0) {
      // the data is there (a stream of unknown length allocates only as bytes arrive); reading
      // collects it in chunks and then copies them into one array: twice the data
      MemoryBudget.check(
          name + ": array of shape " + Arrays.toString(header.shape) + " (" + dataBytes + " bytes)",
          2 * dataBytes);
    }
    byte[] data = in.readNBytes((int) dataBytes);
    if (data.length != dataBytes) {
      throw new NpyFormatException(
          name,
          "data truncated: shape "
              + Arrays.toString(header.shape)
              + " of "
              + header.type.descriptor()
              + " needs "
              + dataBytes
              + " bytes, only "
              + data.length
              + " present");
    }
    if (in.read() != -1) {
      throw new NpyFormatException(
          name,
          "data length mismatch: bytes follow the "
              + dataBytes
              + " data bytes that shape "
              + Arrays.toString(header.shape)
              + " of "
              + header.type.descriptor()
              + " needs");
    }
    return NpyArray.adopt(header.type, header.shape, data);
  }

  /**
   * Writes an array as a {@code .npy} file, replacing any existing file.
   *
   * @param array the array
   * @param file the destination
   * @throws IOException if writing fails
   */
  public static void write(NpyArray array, Path file) throws IOException {
    Objects.requireNonNull(file, "file");
    Files.write(file, toBytes(array));
  }

  /**
   * Writes an array in {@code .npy} form to a stream; the stream is not closed.
   *
   * @param array the array
   * @param out the destination
   * @throws IOException if writing fails
   */
  public static void write(NpyArray array, OutputStream out) throws IOException {
    Objects.requireNonNull(out, "out");
    out.write(toBytes(array));
  }

  /**
   * Returns the {@code .npy} encoding of an array (deterministic; see the class comment).
   *
   * @param array the array
   * @return the file's bytes
   */
  public static byte[] toBytes(NpyArray array) {
    Objects.requireNonNull(array, "array");
    StringBuilder dict = new StringBuilder();
    dict.append("{'descr': '")
        .append(array.dataType().descriptor())
        .append("', 'fortran_order': False, 'shape': (");
    int[] shape = array.shape();
    for (int axis = 0; axis < shape.length; axis++) {
      if (axis > 0) {
        dict.append(", ");
      }
      dict.append(shape[axis]);
    }
    if (shape.length == 1) {
      dict.append(',');
    }
    dict.append("), }");
    byte[] text = dict.toString().getBytes(StandardCharsets.ISO_8859_1);
    int major = 1;
    int prefix = MAGIC.length + 2 + 2;
    int total = padded(prefix + text.length + 1);
    if (total - prefix > 0xFFFF) {
      major = 2;
      prefix = MAGIC.length + 2 + 4;
      total = padded(prefix + text.length + 1);
    }
    byte[] data = array.rawDataShared();
    ByteArrayOutputStream out = new ByteArrayOutputStream(total + data.length);
    out.writeBytes(MAGIC);
    out.write(major);
    out.write(0);
    int headerLength = total - prefix;
    out.write(headerLength & 0xFF);
    out.write((headerLength >>> 8) & 0xFF);
    if (major == 2) {
      out.write((headerLength >>> 16) & 0xFF);
      out.write((headerLength >>> 24) & 0xFF);
    }
    out.writeBytes(text);
    for (int i = prefix + text.length; i < total - 1; i++) {
      out.write(' ');
    }
    out.write('\n');
    out.writeBytes(data);
    return out.toByteArray();
  }

  private static int padded(int length) {
    return (length + ALIGNMENT - 1) / ALIGNMENT * ALIGNMENT;
  }

  /** A validated header. */
  record Header(NpyDataType type, int[] shape, long headerBytes) {
    long dataBytes(String name) throws NpyFormatException {
      long bytes = type.byteWidth();
      for (int d : shape) {
        bytes *= d;
        if (bytes > NpyLimits.MAX_JAVA_ARRAY_BYTES) {
          throw new NpyFormatException(
              name,
              "shape "
                  + Arrays.toString(shape)
                  + " of "
                  + type.descriptor()
                  + " needs more bytes than one Java array holds ("
                  + NpyLimits.MAX_JAVA_ARRAY_BYTES
                  + ")");
        }
      }
      return bytes;
    }
  }

  static Header readHeader(InputStream in, String name) throws IOException {
    byte[] prefix = in.readNBytes(MAGIC.length + 2);
    if (prefix.length < MAGIC.length + 2) {
      throw new NpyFormatException(
          name, "truncated: " + prefix.length + " bytes, too short for a .npy header");
    }
    for (int i = 0; i < MAGIC.length; i++) {
      if (prefix[i] != MAGIC[i]) {
        throw new NpyFormatException(
            name, "not a .npy file: the first bytes are not the NumPy magic \\x93NUMPY");
      }
    }
    int major = prefix[6] & 0xFF;
    int minor = prefix[7] & 0xFF;
    if (minor != 0 || major < 1 || major > 3) {
      throw new NpyFormatException(
          name,
          "unsupported .npy format version "
              + major
              + "."
              + minor
              + "; versions 1.0, 2.0 and 3.0 are read");
    }
    int lengthBytes = major == 1 ? 2 : 4;
    byte[] lengthField = in.readNBytes(lengthBytes);
    if (lengthField.length < lengthBytes) {
      throw new NpyFormatException(name, "truncated inside the header length field");
    }
    long headerLength = 0;
    for (int i = lengthBytes - 1; i >= 0; i--) {
      headerLength = (headerLength << 8) | (lengthField[i] & 0xFF);
    }
    if (headerLength > MAX_HEADER_BYTES) {
      throw new NpyFormatException(
          name,
          "header claims "
              + headerLength
              + " bytes, more than the "
              + MAX_HEADER_BYTES
              + " accepted; the file is corrupt or not a plain array");
    }
    byte[] text = in.readNBytes((int) headerLength);
    if (text.length < headerLength) {
      throw new NpyFormatException(
          name,
          "truncated inside the header: " + text.length + " of " + headerLength + " bytes present");
    }
    String dict =
        new String(text, major == 3 ? StandardCharsets.UTF_8 : StandardCharsets.ISO_8859_1);
    HeaderParser parser = new HeaderParser(name, dict);
    parser.parse();
    return new Header(parser.type, parser.shape, MAGIC.length + 2 + lengthBytes + headerLength);
  }

  /** Parses the header dictionary, a restricted Python literal. */
  private static final class HeaderParser {
    private final String name;
    private final String text;
    private int pos;
    private String descr;
    private Boolean fortranOrder;
    private List<Long> shapeList;
    NpyDataType type;
    int[] shape;

    HeaderParser(String name, String text) {
      this.name = name;
      this.text = text;
    }

    void parse() throws NpyFormatException {
      skipSpace();
      expect('{');
      while (true) {
        skipSpace();
        if (peek() == '}') {
          pos++;
          break;
        }
        String key = parseString();
        skipSpace();
        expect(':');
        skipSpace();
        switch (key) {
          case "descr" -> {
            if (descr != null) {
              throw fail("duplicate key 'descr'");
            }
            if (peek() != '\'' && peek() != '"') {
              throw fail(
                  "'descr' must be a type string such as '<f4'; structured (record) arrays are"
                      + " not read");
            }
            descr = parseString();
          }
          case "fortran_order" -> {
            if (fortranOrder != null) {
              throw fail("duplicate key 'fortran_order'");
            }
            fortranOrder = parseBoolean();
          }
          case "shape" -> {
            if (shapeList != null) {
              throw fail("duplicate key 'shape'");
            }
            shapeList = parseShape();
          }
          default ->
              throw fail(
                  "unexpected header key '"
                      + key
                      + "'; only 'descr', 'fortran_order' and 'shape' are allowed");
        }
        skipSpace();
        char c = peek();
        if (c == ',') {
          pos++;
        } else if (c != '}') {
          throw fail("expected ',' or '}' at header position " + pos + ", found " + describe(c));
        }
      }
      for (; pos < text.length(); pos++) {
        char c = text.charAt(pos);
        if (c != ' ' && c != '\n' && c != '\r' && c != '\t' && c != '\0') {
          throw fail("unexpected text after the header dictionary at position " + pos);
        }
      }
      if (descr == null || fortranOrder == null || shapeList == null) {
        throw fail(
            "header must hold 'descr', 'fortran_order' and 'shape'; missing "
                + (descr == null
                    ? "'descr'"
                    : fortranOrder == null ? "'fortran_order'" : "'shape'"));
      }
      type = NpyDataType.forDescriptor(descr);
      if (type == null) {
        throw fail(explainType(descr));
      }
      if (fortranOrder) {
        throw fail(
            "Fortran-order (column-major) arrays are not read; save numpy.ascontiguousarray(a)"
                + " instead");
      }
      shape = new int[shapeList.size()];
      for (int axis = 0; axis < shape.length; axis++) {
        shape[axis] = shapeList.get(axis).intValue();
      }
    }

    private String explainType(String d) {
      if (d.length() >= 2 && d.charAt(0) == '>') {
        return "big-endian type '"
            + d
            + "' is not read; convert with a.astype(a.dtype.newbyteorder('<'))";
      }
      if (d.contains("O")) {
        return "object arrays ('"
            + d
            + "', pickled Python objects) are never read; save a numeric array";
      }
      return "unsupported element type '"
          + d
          + "'; accepted are '<f4', '<f8', '<i4' and '<i8' (little-endian float32/float64/"
          + "int32/int64)";
    }

    private List<Long> parseShape() throws NpyFormatException {
      expect('(');
      List<Long> dims = new ArrayList<>();
      while (true) {
        skipSpace();
        char c = peek();
        if (c == ')') {
          pos++;
          return dims;
        }
        if (c == '-') {
          throw fail("negative dimension in shape at header position " + pos);
        }
        if (c < '0' || c > '9') {
          throw fail(
              "expected a dimension in 'shape' at position " + pos + ", found " + describe(c));
        }
        long value = 0;
        while (pos < text.length() && Character.isDigit(text.charAt(pos))) {
          value = value * 10 + (text.charAt(pos) - '0');
          if (value > Integer.MAX_VALUE) {
            throw fail("shape dimension at axis " + dims.size() + " exceeds " + Integer.MAX_VALUE);
          }
          pos++;
        }
        if (pos < text.length() && text.charAt(pos) == 'L') {
          pos++; // Python 2 long suffix
        }
        dims.add(value);
        if (dims.size() > 64) {
          throw fail("shape has more than 64 dimensions");
        }
        skipSpace();
        c = peek();
        if (c == ',') {
          pos++;
        } else if (c != ')') {
          throw fail(
              "expected ',' or ')' in 'shape' at position " + pos + ", found " + describe(c));
        }
      }
    }

    private boolean parseBoolean() throws NpyFormatException {
      if (text.startsWith("True", pos)) {
        pos += 4;
        return true;
      }
      if (text.startsWith("False", pos)) {
        pos += 5;
        return false;
      }
      throw fail("'fortran_order' must be True or False at header position " + pos);
    }

    private String parseString() throws NpyFormatException {
      char quote = peek();
      if (quote != '\'' && quote != '"') {
        throw fail(
            "expected a quoted string at header position " + pos + ", found " + describe(quote));
      }
      int end = text.indexOf(quote, pos + 1);
      if (end < 0) {
        throw fail("unterminated string in header at position " + pos);
      }
      String s = text.substring(pos + 1, end);
      if (s.indexOf('\\') >= 0) {
        throw fail("escape sequences are not accepted in header strings");
      }
      pos = end + 1;
      return s;
    }

    private void expect(char c) throws NpyFormatException {
      if (peek() != c) {
        throw fail(
            "expected '" + c + "' at header position " + pos + ", found " + describe(peek()));
      }
      pos++;
    }

    private char peek() {
      return pos < text.length() ? text.charAt(pos) : '\uFFFF';
    }

    private void skipSpace() {
      while (pos < text.length() && (text.charAt(pos) == ' ' || text.charAt(pos) == '\t')) {
        pos++;
      }
    }

    private static String describe(char c) {
      return c == '\uFFFF' ? "the end of the header" : "'" + c + "'";
    }

    private NpyFormatException fail(String problem) {
      return new NpyFormatException(name, "bad header: " + problem);
    }
  }
}
