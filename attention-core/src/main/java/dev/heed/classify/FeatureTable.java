package dev.heed.classify;

import dev.heed.attention.MemoryBudget;
import dev.heed.graph.NodeIndex;
import dev.heed.npy.Npy;
import dev.heed.npy.NpyArray;
import dev.heed.npy.NpyDataType;
import dev.heed.npy.NpyFormatException;
import dev.heed.npy.NpyLimits;
import dev.heed.npy.Npz;
import dev.heed.npy.NpzContents;
import java.io.BufferedReader;
import java.io.IOException;
import java.nio.ByteBuffer;
import java.nio.ByteOrder;
import java.nio.charset.CharacterCodingException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Collections;
import java.util.LinkedHashMap;
import java.util.LinkedHashSet;
import java.util.List;
import java.util.Map;
import java.util.Objects;
import java.util.Set;
import java.util.function.Function;

/**
 * Feature rows that carry their node ids: row {@code r} of {@link #rows()} belongs to the node
 * whose id is {@code ids().get(r)}. {@link #alignTo(NodeIndex)} puts the rows in a graph's node
 * order through its node index, so a feature matrix never has to follow the order in which an edge
 * list happened to name the nodes, and a matrix in another order fails instead of being read wrong.
 *
 * <pre>{@code
 * // features.npz: 'features' float32 [n, f], 'node_ids' int64 [n] (numpy.savez)
 * FeatureTable<String> table = FeatureTable.readNpz(Path.of("features.npz")).mapIds(String::valueOf);
 * EdgeListResult<String> graph = EdgeListFileBuilder.stringIds(Path.of("edges.csv")).build();
 * NodeFeatures features = table.alignTo(graph.nodes()); // row i = node i of the graph
 * }</pre>
 *
 * <p>Files: an {@code .npz} archive with the arrays {@value #NPZ_FEATURES} (float32 or float64 [n,
 * f]) and {@value #NPZ_NODE_IDS} (int32 or int64 [n]); or a {@code .npy} matrix with a text file of
 * ids, one per line ({@link #readNpy(Path, Path)}). Both are read with Heed's own {@code .npy}
 * reader ({@link dev.heed.npy}) and its limits.
 *
 * <p>Memory: the rows (4·n·f bytes) and the ids. Thread safety: immutable.
 *
 * @param <K> the id type
 */
public final class FeatureTable<K> {

  /** Name of the feature matrix in an {@code .npz} archive: float32 or float64 [n, f]. */
  public static final String NPZ_FEATURES = "features";

  /** Name of the node ids in an {@code .npz} archive: int32 or int64 [n], row r's id. */
  public static final String NPZ_NODE_IDS = "node_ids";

  /** How many ids an error message lists at most. */
  private static final int LISTED = 5;

  private final List<K> ids;
  private final NodeFeatures rows;

  private FeatureTable(List<K> ids, NodeFeatures rows) {
    this.ids = ids;
    this.rows = rows;
  }

  /**
   * Pairs rows with their ids.
   *
   * @param ids input, copied: row r's id at r, no nulls
   * @param rows the rows, one per id
   * @param <K> the id type
   * @return the table
   * @throws IllegalArgumentException if the counts differ
   * @throws NullPointerException if an argument or an id is null
   */
  public static <K> FeatureTable<K> of(List<? extends K> ids, NodeFeatures rows) {
    Objects.requireNonNull(rows, "rows");
    List<K> copy = List.copyOf(ids); // rejects null ids
    if (copy.size() != rows.nodeCount()) {
      throw new IllegalArgumentException(
          copy.size() + " ids for " + rows.nodeCount() + " feature rows; give one id per row");
    }
    return new FeatureTable<>(copy, rows);
  }

  /**
   * Rows whose ids are their positions {@code 0..n-1}: row i is the node with id i. Use this only
   * when that is what the rows mean; {@link #alignTo(NodeIndex)} then still checks that every node
   * of the graph has an id in {@code 0..n-1}.
   *
   * @param rows the rows
   * @return the table with ids {@code 0L..n-1}
   */
  public static FeatureTable<Long> positional(NodeFeatures rows) {
    Long[] ids = new Long[rows.nodeCount()];
    for (int i = 0; i < ids.length; i++) {
      ids[i] = (long) i;
    }
    return new FeatureTable<>(List.of(ids), rows);
  }

  /**
   * Reads an {@code .npz} archive holding {@value #NPZ_FEATURES} and {@value #NPZ_NODE_IDS}, with
   * the default limits. Other entries are ignored.
   *
   * @param file the archive
   * @return the table
   * @throws NpyFormatException if the archive is malformed, lacks an entry, or an entry has the
   *     wrong type or shape (the message names the entry and what it should be)
   * @throws IOException if the file cannot be read
   * @throws IllegalArgumentException if a feature value is NaN or infinite
   */
  public static FeatureTable<Long> readNpz(Path file) throws IOException {
    NpzContents contents;
    try {
      contents = Npz.read(file, NpyLimits.defaults());
    } catch (NpyFormatException e) {
      if (e.getMessage().contains("'<U") || e.getMessage().contains("'|S")) {
        throw new NpyFormatException(
            e.entry(),
            e.getMessage().substring(e.entry().length() + 2)
                + "; text ids cannot be read from an .npz: save the features as .npy and the ids"
                + " one per line in a text file beside it",
            e);
      }
      throw e;
    }
    NpyArray features = contents.arrays().get(NPZ_FEATURES);
    NpyArray ids = contents.arrays().get(NPZ_NODE_IDS);
    if (features == null || ids == null) {
      throw new NpyFormatException(
          file.toString(),
          "a features archive holds '"
              + NPZ_FEATURES
              + "' (float [n, f]) and '"
              + NPZ_NODE_IDS
              + "' (int64 [n]); found "
              + contents.arrays().keySet()
              + " (numpy.savez(file, "
              + NPZ_FEATURES
              + "=x, "
              + NPZ_NODE_IDS
              + "=ids))");
    }
    NodeFeatures rows = NodeFeatures.fromArray(features, file + ":" + NPZ_FEATURES);
    if (ids.rank() != 1
        || ids.dataType().isFloatingPoint()
        || ids.dimension(0) != rows.nodeCount()) {
      throw new NpyFormatException(
          file + ":" + NPZ_NODE_IDS,
          "node ids must be a 1-D int32 or int64 array with one id per feature row ("
              + rows.nodeCount()
              + "), got "
              + ids.dataType().descriptor()
              + " of shape "
              + Arrays.toString(ids.shape()));
    }
    return new FeatureTable<>(List.of(longs(ids)), rows);
  }

  private static Long[] longs(NpyArray ids) {
    ByteBuffer b = ByteBuffer.wrap(ids.rawData()).order(ByteOrder.LITTLE_ENDIAN);
    Long[] out = new Long[ids.elementCount()];
    for (int i = 0; i < out.length; i++) {
      out[i] = ids.dataType() == NpyDataType.INT64 ? b.getLong(i * 8) : (long) b.getInt(i * 4);
    }
    return out;
  }

  /**
   * Reads a {@code .npy} feature matrix [n, f] and its ids from a UTF-8 text file with one id per
   * line, line r for row r (a byte order mark, CRLF line ends and spaces around an id are passed
   * over; an id written in double quotes, RFC 4180 style, is unquoted; blank lines are an error).
   *
   * @param npy the matrix, float32 or float64
   * @param idsFile the ids, exactly n lines
   * @return the table
   * @throws NpyFormatException if the matrix is malformed or not 2-D float
   * @throws IOException if a file cannot be read, or the ids file has the wrong number of lines, an
   *     empty line or invalid UTF-8 (the message names the file and line)
   * @throws IllegalArgumentException if a feature value is NaN or infinite
   */
  public static FeatureTable<String> readNpy(Path npy, Path idsFile) throws IOException {
    NodeFeatures rows = NodeFeatures.readNpy(npy);
    List<String> ids = new ArrayList<>(rows.nodeCount());
    long line = 0;
    try (BufferedReader in = Files.newBufferedReader(idsFile, StandardCharsets.UTF_8)) {
      for (String text = in.readLine(); text != null; text = in.readLine()) {
        line++;
        if (line == 1 && text.startsWith("\uFEFF")) {
          text = text.substring(1);
        }
        String id = unquote(text.strip());
        if (id.isEmpty()) {
          throw new IOException(
              idsFile + ", line " + line + ": empty line; the ids file has one id per line");
        }
        ids.add(id);
      }
    } catch (CharacterCodingException e) {
      throw new IOException(idsFile + ", line " + (line + 1) + ": not valid UTF-8 text", e);
    }
    if (ids.size() != rows.nodeCount()) {
      throw new IOException(
          idsFile
              + ": "
              + ids.size()
              + " ids, but "
              + npy.getFileName()
              + " has "
              + rows.nodeCount()
              + " rows; the ids file needs one line per row, in row order");
    }
    return new FeatureTable<>(List.copyOf(ids), rows);
  }

  private static String unquote(String s) {
    if (s.length() >= 2 && s.charAt(0) == '"' && s.charAt(s.length() - 1) == '"') {
      return s.substring(1, s.length() - 1).replace("\"\"", "\"");
    }
    return s;
  }

  /**
   * Returns the ids, row r's at r.
   *
   * @return an unmodifiable list
   */
  public List<K> ids() {
    return ids;
  }

  /**
   * Returns the rows in file order (not aligned to any graph).
   *
   * @return the rows
   */
  public NodeFeatures rows() {
    return rows;
  }

  /**
   * Returns the same rows with each id converted, for example {@code Long} ids to the text ids of
   * an edge list read with {@code stringIds}: {@code mapIds(String::valueOf)}.
   *
   * @param convert the conversion, applied once per id, must not return null
   * @param <T> the new id type
   * @return a new table sharing the rows
   */
  public <T> FeatureTable<T> mapIds(Function<? super K, ? extends T> convert) {
    List<T> mapped = new ArrayList<>(ids.size());
    for (K id : ids) {
      mapped.add(convert.apply(id));
    }
    return new FeatureTable<>(List.copyOf(mapped), rows);
  }

  /**
   * Returns the ids that are not nodes of the index, in row order: rows a graph has no node for (a
   * caller may add them as nodes without edges, then align to the larger index). O(n).
   *
   * @param nodes the node index
   * @return the ids, each once
   * @throws IllegalArgumentException if one of them appears on two rows
   */
  public List<K> idsNotIn(NodeIndex<K> nodes) {
    Set<K> extra = new LinkedHashSet<>();
    for (int r = 0; r < ids.size(); r++) {
      K id = ids.get(r);
      if (nodes.indexOf(id) < 0 && !extra.add(id)) {
        throw new IllegalArgumentException(
            "id '" + id + "' has two feature rows (" + ids.indexOf(id) + " and " + r + ")");
      }
    }
    return Collections.unmodifiableList(new ArrayList<>(extra));
  }

  /**
   * Puts the rows in the index's node order: row i of the result is the row whose id is {@code
   * nodes.idOf(i)}. Every node must have exactly one row and every row a node. O(n·f).
   *
   * @param nodes the graph's node index
   * @return the aligned features, {@code nodes.size()} rows
   * @throws IllegalArgumentException naming how many and which ids (up to five) when nodes have no
   *     row, rows have no node, or an id has two rows
   */
  public NodeFeatures alignTo(NodeIndex<K> nodes) {
    int n = nodes.size();
    int f = rows.featureCount();
    int[] rowOf = new int[n];
    Arrays.fill(rowOf, -1);
    List<String> extra = new ArrayList<>();
    int extraCount = 0;
    for (int r = 0; r < ids.size(); r++) {
      int node = nodes.indexOf(ids.get(r));
      if (node < 0) {
        if (extraCount++ < LISTED) {
          extra.add("'" + ids.get(r) + "'");
        }
      } else if (rowOf[node] >= 0) {
        throw new IllegalArgumentException(
            "id '" + ids.get(r) + "' has two feature rows (" + rowOf[node] + " and " + r + ")");
      } else {
        rowOf[node] = r;
      }
    }
    List<String> missing = new ArrayList<>();
    int missingCount = 0;
    for (int i = 0; i < n; i++) {
      if (rowOf[i] < 0 && missingCount++ < LISTED) {
        missing.add("'" + nodes.idOf(i) + "'");
      }
    }
    if (missingCount > 0 || extraCount > 0) {
      StringBuilder m = new StringBuilder("feature rows do not match the graph's nodes:");
      if (missingCount > 0) {
        m.append(' ')
            .append(missingCount)
            .append(" of the ")
            .append(n)
            .append(" nodes have no row (")
            .append(String.join(", ", missing))
            .append(missingCount > LISTED ? ", ..." : "")
            .append(')');
      }
      if (extraCount > 0) {
        m.append(missingCount > 0 ? ";" : "")
            .append(' ')
            .append(extraCount)
            .append(" of the ")
            .append(ids.size())
            .append(" rows have an id that is not a node (")
            .append(String.join(", ", extra))
            .append(extraCount > LISTED ? ", ..." : "")
            .append(')');
      }
      throw new IllegalArgumentException(
          m.append("; ids are matched exactly, as written in the edge list").toString());
    }
    MemoryBudget.check("node features (" + n + " × " + f + ")", 4L * n * f);
    float[] values = new float[Math.multiplyExact(n, f)];
    for (int i = 0; i < n; i++) {
      rows.copyRow(rowOf[i], values, i * f);
    }
    return NodeFeatures.adopt(values, n, f);
  }

  /**
   * Writes the table as an {@code .npz} archive ({@value #NPZ_FEATURES} float32, {@value
   * #NPZ_NODE_IDS} int64), readable by {@link #readNpz(Path)} and {@code numpy.load}.
   *
   * @param table the table, with integer ids
   * @param file the destination, replaced if it exists
   * @throws IOException if writing fails
   */
  public static void writeNpz(FeatureTable<Long> table, Path file) throws IOException {
    int n = table.rows.nodeCount();
    int f = table.rows.featureCount();
    long[] ids = new long[n];
    for (int r = 0; r < n; r++) {
      ids[r] = table.ids.get(r);
    }
    Map<String, NpyArray> arrays = new LinkedHashMap<>();
    arrays.put(NPZ_FEATURES, NpyArray.ofFloats(table.rows.shared(), n, f));
    arrays.put(NPZ_NODE_IDS, NpyArray.ofLongs(ids, n));
    Npz.write(arrays, file);
  }

  /**
   * Writes the rows as a {@code .npy} matrix and the ids, one per line, to a text file: the pair
   * {@link #readNpy(Path, Path)} reads. Ids that start with a quote or with or end in spaces are
   * written in double quotes.
   *
   * @param npy the matrix's destination (float32)
   * @param idsFile the ids' destination
   * @throws IOException if writing fails
   * @throws IllegalArgumentException if an id holds a line break (one id per line cannot hold it)
   */
  public void writeNpy(Path npy, Path idsFile) throws IOException {
    StringBuilder text = new StringBuilder();
    for (K id : ids) {
      String s = String.valueOf(id);
      if (s.indexOf('\n') >= 0 || s.indexOf('\r') >= 0) {
        throw new IllegalArgumentException(
            "id '" + s + "' holds a line break; an ids file has one id per line");
      }
      boolean quote = s.startsWith("\"") || !s.equals(s.strip());
      text.append(quote ? '"' + s.replace("\"", "\"\"") + '"' : s).append('\n');
    }
    Npy.write(NpyArray.ofFloats(rows.shared(), rows.nodeCount(), rows.featureCount()), npy);
    Files.writeString(idsFile, text, StandardCharsets.UTF_8);
  }
}
