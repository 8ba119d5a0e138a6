package dev.heed.live;

import java.util.Arrays;
import java.util.Objects;

/**
 * A list of changes to one {@link VersionedGraph}, applied together by {@link
 * VersionedGraph#apply}: readers see all of them or none. Operations apply in the order they were
 * recorded, so a batch may add a node and then its edges, or remove an edge and add it back.
 *
 * <pre>{@code
 * BatchResult result =
 *     graph.apply(
 *         graph.newBatch()
 *             .addNode("acct-7", features7)
 *             .addEdge("acct-3", "acct-7") // acct-7 attends to acct-3
 *             .setFeatures("acct-3", features3));
 * }</pre>
 *
 * <p>Checked when recorded (the call throws and records nothing): null ids, and feature rows of the
 * wrong width or with NaN or infinite values. Checked when applied (the whole batch is refused with
 * a {@link RejectedUpdateException} naming the operation, and the graph is unchanged): unknown ids,
 * nodes added twice, duplicate edges under {@link dev.heed.graph.DuplicatePolicy#REJECT}, removal
 * of an edge that is not there, removal of a self-loop the graph keeps by policy. Feature rows are
 * copied when recorded; ids are kept by reference and must not change their {@code equals} or
 * {@code hashCode} afterwards. A batch can be applied again or {@link #clear() cleared} and reused.
 *
 * <p>Cost: O(1) amortised per operation, plus O(f) to check and copy a feature row. Memory: about
 * 13 bytes per operation plus the copied feature rows.
 *
 * <p>Thread safety: not thread safe; fill a batch in one thread (any thread) and do not change it
 * while {@link VersionedGraph#apply} runs.
 *
 * @param <K> the type of the caller's node ids
 */
public final class UpdateBatch<K> {

  static final byte ADD_NODE = 0;
  static final byte ADD_EDGE = 1;
  static final byte REMOVE_EDGE = 2;
  static final byte SET_FEATURES = 3;

  private final VersionedGraph<K> graph;
  private final int featureCount;
  private byte[] kinds = new byte[16];
  private Object[] first = new Object[16];
  private Object[] second = new Object[16]; // edges: target; nodes: null
  private float[][] features = new float[16][];
  private int size;

  UpdateBatch(VersionedGraph<K> graph, int featureCount) {
    this.graph = graph;
    this.featureCount = featureCount;
  }

  /**
   * Records a new node without features. It can take part in edges at once but cannot be scored
   * until its features are set (see {@link LiveSnapshot#hasFeatures}).
   *
   * @param id the caller's id, not null; refused when applied if it is already a node
   * @return this batch
   * @throws NullPointerException if {@code id} is null
   */
  public UpdateBatch<K> addNode(K id) {
    record(ADD_NODE, Objects.requireNonNull(id, "node id"), null, null);
    return this;
  }

  /**
   * Records a new node with its features.
   *
   * @param id the caller's id, not null; refused when applied if it is already a node
   * @param features input, not modified, copied: {@link VersionedGraph#featureCount()} finite
   *     values
   * @return this batch
   * @throws NullPointerException if an argument is null
   * @throws IllegalArgumentException if the row has the wrong width or a NaN or infinite value
   */
  public UpdateBatch<K> addNode(K id, float[] features) {
    Objects.requireNonNull(id, "node id");
    record(ADD_NODE, id, null, checkedCopy(id, features));
    return this;
  }

  /**
   * Records an edge {@code source -> target}: {@code target} attends to {@code source}. Under
   * {@link dev.heed.graph.DirectionPolicy#SYMMETRISE} it also makes {@code source} attend to {@code
   * target}. Adding an edge that is present merges into it under {@link
   * dev.heed.graph.DuplicatePolicy#MERGE} (no change) and refuses the batch under {@code REJECT};
   * adding a self-loop under {@link dev.heed.graph.SelfLoopPolicy#ADD} changes nothing (every node
   * already has one).
   *
   * @param source the source's id, not null; must be a node when the batch applies (it may be added
   *     earlier in the same batch)
   * @param target the target's id, not null; the same
   * @return this batch
   * @throws NullPointerException if an id is null
   */
  public UpdateBatch<K> addEdge(K source, K target) {
    record(
        ADD_EDGE,
        Objects.requireNonNull(source, "source id"),
        Objects.requireNonNull(target, "target id"),
        null);
    return this;
  }

  /**
   * Records the removal of the edge {@code source -> target} (under {@link
   * dev.heed.graph.DirectionPolicy#SYMMETRISE}, of the undirected tie, both directions). The batch
   * is refused if the edge is not there at that point of the batch (removal is never a silent
   * no-op), or if it is a self-loop kept by {@link dev.heed.graph.SelfLoopPolicy#ADD}.
   *
   * @param source the source's id, not null
   * @param target the target's id, not null
   * @return this batch
   * @throws NullPointerException if an id is null
   */
  public UpdateBatch<K> removeEdge(K source, K target) {
    record(
        REMOVE_EDGE,
        Objects.requireNonNull(source, "source id"),
        Objects.requireNonNull(target, "target id"),
        null);
    return this;
  }

  /**
   * Records a node's features, replacing any it had.
   *
   * @param id the node's id, not null; must be a node when the batch applies
   * @param features input, not modified, copied: {@link VersionedGraph#featureCount()} finite
   *     values
   * @return this batch
   * @throws NullPointerException if an argument is null
   * @throws IllegalArgumentException if the row has the wrong width or a NaN or infinite value
   */
  public UpdateBatch<K> setFeatures(K id, float[] features) {
    Objects.requireNonNull(id, "node id");
    record(SET_FEATURES, id, null, checkedCopy(id, features));
    return this;
  }

  /**
   * Returns the number of operations recorded.
   *
   * @return the count, at least 0
   */
  public int size() {
    return size;
  }

  /**
   * Returns whether no operation is recorded.
   *
   * @return true for an empty batch
   */
  public boolean isEmpty() {
    return size == 0;
  }

  /** Forgets every operation, keeping the batch's buffers for reuse. O(size). */
  public void clear() {
    Arrays.fill(first, 0, size, null);
    Arrays.fill(second, 0, size, null);
    Arrays.fill(features, 0, size, null);
    size = 0;
  }

  VersionedGraph<K> graph() {
    return graph;
  }

  byte kind(int op) {
    return kinds[op];
  }

  @SuppressWarnings("unchecked") // only K instances are recorded
  K first(int op) {
    return (K) first[op];
  }

  @SuppressWarnings("unchecked") // only K instances are recorded
  K second(int op) {
    return (K) second[op];
  }

  /** The first id of every operation (the node, or the edge's source), shared, not copied. */
  Object[] firstIds() {
    return first;
  }

  /** The second id of every operation (the edge's target; null for node operations), shared. */
  Object[] secondIds() {
    return second;
  }

  float[] features(int op) {
    return features[op];
  }

  static String describe(byte kind) {
    switch (kind) {
      case ADD_NODE:
        return "addNode";
      case ADD_EDGE:
        return "addEdge";
      case REMOVE_EDGE:
        return "removeEdge";
      default:
        return "setFeatures";
    }
  }

  private void record(byte kind, Object a, Object b, float[] row) {
    if (size == kinds.length) {
      int capacity = size + (size >> 1);
      kinds = Arrays.copyOf(kinds, capacity);
      first = Arrays.copyOf(first, capacity);
      second = Arrays.copyOf(second, capacity);
      features = Arrays.copyOf(features, capacity);
    }
    kinds[size] = kind;
    first[size] = a;
    second[size] = b;
    features[size] = row;
    size++;
  }

  private float[] checkedCopy(Object id, float[] row) {
    Objects.requireNonNull(row, "features");
    if (row.length != featureCount) {
      throw new IllegalArgumentException(
          "features for node '"
              + id
              + "' must have "
              + featureCount
              + " values (the graph's feature count), got "
              + row.length);
    }
    for (int k = 0; k < row.length; k++) {
      if (!Float.isFinite(row[k])) {
        throw new IllegalArgumentException(
            "feature "
                + k
                + " of node '"
                + id
                + "' is "
                + row[k]
                + "; features must be finite (replace or drop the value before recording it)");
      }
    }
    return row.clone();
  }
}
