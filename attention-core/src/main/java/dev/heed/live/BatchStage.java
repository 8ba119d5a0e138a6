package dev.heed.live;

import dev.heed.graph.CsrGraph;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.HashMap;
import java.util.List;
import java.util.Map;

/**
 * Applies one batch to one snapshot in two steps. {@link #stage()} runs the batch's operations in
 * order against private copies (new ids in a local map, each touched row in a {@link RowEditor},
 * features in a local map) and throws at the first bad operation, so a refused batch leaves nothing
 * behind. {@link #commit} then appends the new ids and builds the next snapshot by path copying; it
 * cannot fail on input. Ids that already existed are looked up before, without the lock ({@link
 * #preResolve}), since an index never changes once given.
 *
 * <p>Two ways to run it. Under the graph's write lock, from the latest snapshot: always correct.
 * Or, for batches of edge and feature operations on known nodes with direction kept ({@link
 * #canStageAhead}), staged and encoded before taking the lock from the snapshot seen then; under
 * the lock, {@link #rebaseOnto} checks each touched row against the latest snapshot by identity of
 * its delta and runs the operations of the rows that changed meanwhile again (each row's operations
 * depend only on that row when direction is kept), so that the lock is held for the few rows both
 * writers touched plus the trie update. If anything cannot be carried over (a compaction in
 * between, an operation that no longer applies), the caller stages the batch again under the lock,
 * which reports the first bad operation exactly.
 */
final class BatchStage<K> {

  /** The most nodes and row entries a live graph holds (Java array limit, common practice). */
  static final int MAX_SIZE = Integer.MAX_VALUE - 8;

  private final VersionedGraph<K> graph;
  private LiveSnapshot<K> from;
  private final boolean ahead; // staged before taking the lock; row editors keep logs
  private final NodeIdTable<K> idTable;
  private final UpdateBatch<K> batch;
  private final int[] firstIndex;
  private final int[] secondIndex;
  private final List<K> newIds = new ArrayList<>();
  private final Map<K, Integer> newIdIndex = new HashMap<>();
  private final RowEditors rows;
  private final Map<Integer, float[]> features = new HashMap<>();
  private long stagedAdded; // running counts while staging, for the size limit
  private long stagedRemoved;
  private byte[] before; // per operation: its source in its target's row as of from, see RowEditor
  private int[] orderedRows; // editor positions by target, when encoded ahead

  BatchStage(
      VersionedGraph<K> graph,
      LiveSnapshot<K> from,
      NodeIdTable<K> idTable,
      UpdateBatch<K> batch,
      int[][] resolved,
      boolean ahead) {
    this.graph = graph;
    this.from = from;
    this.ahead = ahead;
    this.idTable = idTable;
    this.batch = batch;
    this.firstIndex = resolved[0];
    this.secondIndex = resolved[1];
    this.rows = new RowEditors(from, Math.min(batch.size(), 1 << 16));
  }

  /**
   * Looks up every id of the batch in {@code ids} (a published snapshot's), -1 where absent. Needs
   * no lock: indices found stay valid in every later version.
   */
  static <K> int[][] preResolve(UpdateBatch<K> batch, NodeIdView<K> ids) {
    int size = batch.size();
    int[] first = new int[size];
    int[] second = new int[size];
    ids.indexOfAll(batch.firstIds(), size, first);
    ids.indexOfAll(batch.secondIds(), size, second);
    return new int[][] {first, second};
  }

  /**
   * Returns whether the batch can be staged before taking the write lock: direction kept, no new
   * nodes, every id known to the snapshot its ids were looked up in (of fewer than 2^30 nodes).
   */
  static <K> boolean canStageAhead(
      VersionedGraph<K> graph, UpdateBatch<K> batch, int[][] resolved, LiveSnapshot<K> seen) {
    if (graph.symmetrises() || seen.nodeCount >= 1 << 30) {
      return false;
    }
    for (int op = 0; op < batch.size(); op++) {
      byte kind = batch.kind(op);
      if (kind == UpdateBatch.ADD_NODE
          || resolved[0][op] < 0
          || (kind != UpdateBatch.SET_FEATURES && resolved[1][op] < 0)) {
        return false;
      }
    }
    return true;
  }

  /** Runs the operations against private state; throws at the first one that cannot apply. */
  void stage() {
    lookUpRows();
    for (int op = 0; op < batch.size(); op++) {
      switch (batch.kind(op)) {
        case UpdateBatch.ADD_NODE:
          addNode(op);
          break;
        case UpdateBatch.ADD_EDGE:
          addEdge(op, node(op, batch.first(op), firstIndex[op], "source"), target(op));
          break;
        case UpdateBatch.REMOVE_EDGE:
          removeEdge(op, node(op, batch.first(op), firstIndex[op], "source"), target(op));
          break;
        default:
          features.put(node(op, batch.first(op), firstIndex[op], "node"), batch.features(op));
          break;
      }
    }
  }

  /**
   * Looks up, ahead of the operations, what they will read of the rows they touch: each row's delta
   * (its editor is made with it) and, for each edge operation on known nodes, whether its source is
   * in its target's row as of {@code from} (in the base row and in the delta's two sides, by binary
   * search). Each kind of load runs over all operations at once, one trie level or search step at a
   * time, so that loads of different rows wait for memory together instead of one after another
   * (the same idea as the staged id lookups). The operations then only consult the result.
   */
  private void lookUpRows() {
    int size = batch.size();
    int stride = graph.symmetrises() ? 2 : 1; // under SYMMETRISE the source's row too
    int[] ops = new int[size];
    int[] targets = new int[stride * size];
    int count = 0;
    for (int op = 0; op < size; op++) {
      byte kind = batch.kind(op);
      if ((kind == UpdateBatch.ADD_EDGE || kind == UpdateBatch.REMOVE_EDGE)
          && secondIndex[op] >= 0
          && firstIndex[op] >= 0) {
        targets[stride * count] = secondIndex[op];
        if (stride == 2) {
          targets[stride * count + 1] = firstIndex[op];
        }
        ops[count++] = op;
      }
    }
    Object[] deltas = new Object[stride * count];
    from.rowDeltas.getAll(targets, stride * count, deltas);
    for (int k = 0; k < stride * count; k++) {
      rows.of(targets[k], deltas[k]);
    }
    int[] keys = new int[count];
    int[] low = new int[count];
    int[] length = new int[count];
    boolean[] inBase = new boolean[count];
    CsrGraph base = from.base;
    int baseNodes = base.nodeCount();
    for (int j = 0; j < count; j++) {
      int target = secondIndex[ops[j]];
      keys[j] = firstIndex[ops[j]];
      if (target < baseNodes && keys[j] < baseNodes) {
        low[j] = base.rowStart(target);
        length[j] = base.rowEnd(target) - low[j];
      }
    }
    StagedSearch.inBaseRows(base, low, length, keys, count, inBase);
    int[][] sides = new int[2 * count][];
    int[] sideKeys = new int[2 * count];
    int[] sideLow = new int[2 * count];
    int[] sideLength = new int[2 * count];
    boolean[] inSide = new boolean[2 * count];
    for (int j = 0; j < count; j++) {
      if (deltas[stride * j] instanceof int[]) {
        int[] flat = (int[]) deltas[stride * j];
        sides[2 * j] = flat;
        sides[2 * j + 1] = flat;
        sideKeys[2 * j] = keys[j];
        sideKeys[2 * j + 1] = keys[j];
        sideLow[2 * j] = 1;
        sideLength[2 * j] = flat[0];
        sideLow[2 * j + 1] = 1 + flat[0];
        sideLength[2 * j + 1] = flat.length - 1 - flat[0];
      }
    }
    StagedSearch.inArrays(sides, sideLow, sideLength, sideKeys, 2 * count, inSide);
    before = new byte[size];
    for (int j = 0; j < count; j++) {
      Object delta = deltas[stride * j];
      boolean present;
      if (delta instanceof RowDeltas.Chunked) {
        present =
            RowDeltas.isAdded(delta, keys[j])
                || (!RowDeltas.isRemoved(delta, keys[j]) && inBase[j]);
      } else {
        present = inSide[2 * j] || (!inSide[2 * j + 1] && inBase[j]);
      }
      before[ops[j]] = present ? RowEditor.PRESENT : RowEditor.ABSENT;
    }
  }

  private int target(int op) {
    return node(op, batch.second(op), secondIndex[op], "target");
  }

  private void addNode(int op) {
    K id = batch.first(op);
    int existing = firstIndex[op] >= 0 ? firstIndex[op] : idTable.indexOf(id);
    if (existing >= 0) {
      throw reject(
          op,
          "node '"
              + id
              + "' already exists (index "
              + existing
              + "); use setFeatures to change its features");
    }
    if (newIdIndex.containsKey(id)) {
      throw reject(op, "node '" + id + "' is added twice in this batch");
    }
    int index = from.nodeCount + newIds.size();
    if ((long) (index + 1) * graph.featureCount() > MAX_SIZE) {
      throw reject(
          op,
          "a live graph with "
              + graph.featureCount()
              + " features per node holds at most "
              + MAX_SIZE / graph.featureCount()
              + " nodes (its compacted features are one float array of n·f values)");
    }
    newIds.add(id);
    newIdIndex.put(id, index);
    if (graph.addsSelfLoops()) {
      editor(index).add(index);
      countAdded(op, 1);
    }
    float[] row = batch.features(op);
    if (row != null) {
      features.put(index, row);
    }
  }

  private void addEdge(int op, int source, int target) {
    if (source == target && graph.addsSelfLoops()) {
      return; // every node already attends to itself under SelfLoopPolicy.ADD
    }
    RowEditor row = editor(target);
    if (ahead) {
      row.log(op, source, true);
    }
    if (row.contains(source, before[op])) {
      if (graph.rejectsDuplicates()) {
        throw reject(
            op,
            "duplicate "
                + edgeText(op)
                + ": the graph already has it (or an earlier operation of this batch added it);"
                + " drop the repeat or build the live graph with DuplicatePolicy.MERGE");
      }
      return;
    }
    row.add(source);
    if (graph.symmetrises() && source != target) {
      editor(source).add(target);
      countAdded(op, 2);
    } else {
      countAdded(op, 1);
    }
  }

  private void removeEdge(int op, int source, int target) {
    if (source == target && graph.addsSelfLoops()) {
      throw reject(
          op,
          "cannot remove the self-loop of node '"
              + batch.first(op)
              + "': SelfLoopPolicy.ADD keeps one on every node");
    }
    RowEditor row = editor(target);
    if (ahead) {
      row.log(op, source, false);
    }
    if (!row.contains(source, before[op])) {
      throw reject(
          op,
          "cannot remove "
              + edgeText(op)
              + ": the graph does not have it at this point of the batch (check the ids and"
              + " direction, or that it was not removed already)");
    }
    row.remove(source);
    stagedRemoved++;
    if (graph.symmetrises() && source != target) {
      editor(source).remove(target);
      stagedRemoved++;
    }
  }

  private void countAdded(int op, int entries) {
    stagedAdded += entries;
    if (from.edgeCount + stagedAdded - stagedRemoved > MAX_SIZE) {
      throw reject(op, "a live graph holds at most " + MAX_SIZE + " row entries");
    }
  }

  private String edgeText(int op) {
    return graph.symmetrises()
        ? "undirected edge {'" + batch.first(op) + "', '" + batch.second(op) + "'}"
        : "edge '" + batch.first(op) + "' -> '" + batch.second(op) + "'";
  }

  private int node(int op, K id, int resolved, String role) {
    if (resolved >= 0) {
      return resolved;
    }
    int index = idTable.indexOf(id);
    if (index >= 0) {
      return index;
    }
    Integer added = newIdIndex.get(id);
    if (added != null) {
      return added;
    }
    throw reject(
        op,
        "unknown "
            + role
            + " id '"
            + id
            + "': it is not a node of the graph (version "
            + from.version
            + ", "
            + from.nodeCount
            + " nodes) and no earlier operation of this batch adds it; add it with addNode first");
  }

  private RowEditor editor(int target) {
    return rows.of(target);
  }

  private RejectedUpdateException reject(int op, String why) {
    return new RejectedUpdateException(
        "batch refused, nothing applied: operation "
            + op
            + " of "
            + batch.size()
            + " ("
            + UpdateBatch.describe(batch.kind(op))
            + "): "
            + why,
        op);
  }

  /** Encodes every changed row ahead of the lock; {@link #commit} then reuses the results. */
  void encodeAhead() {
    for (int p = 0; p < rows.size(); p++) {
      if (rows.get(p).changed()) {
        rows.get(p).encode();
      }
    }
    orderedRows = rows.positionsByTarget();
  }

  /**
   * Carries a batch staged ahead over to {@code latest}, a later snapshot: rows whose delta is no
   * longer the one they were staged on have their operations run again. Returns false when that
   * cannot be done (another base, or an operation that no longer applies); the batch must then be
   * staged again from {@code latest}. O(touched rows) plus the rows run again.
   */
  boolean rebaseOnto(LiveSnapshot<K> latest) {
    assert ahead;
    if (latest == from) {
      return true;
    }
    if (latest.base != from.base) {
      return false;
    }
    long added = 0;
    long removed = 0;
    Object[] deltas = latestDeltas(latest);
    for (int p = 0; p < rows.size(); p++) {
      RowEditor row = rows.get(p);
      Object now = deltas[p];
      if (now != row.oldDelta) {
        row = row.replayOnto(now, graph.rejectsDuplicates());
        if (row == null) {
          return false;
        }
        rows.replace(p, row);
      }
      added += row.adds();
      removed += row.removes();
    }
    if (latest.edgeCount + added - removed > MAX_SIZE) {
      return false;
    }
    from = latest;
    rows.readFrom(latest);
    return true;
  }

  /** Returns each editor's row delta in {@code latest}, by editor position. */
  private Object[] latestDeltas(LiveSnapshot<K> latest) {
    int[] targets = new int[rows.size()];
    for (int p = 0; p < targets.length; p++) {
      targets[p] = rows.get(p).target;
    }
    Object[] deltas = new Object[targets.length];
    latest.rowDeltas.getAll(targets, targets.length, deltas);
    return deltas;
  }

  /**
   * Appends the new ids to {@code idTable} and returns the next snapshot, version {@code
   * from.version + 1}; {@code result[0]} receives what changed. Call only after {@link #stage()}
   * returned.
   */
  LiveSnapshot<K> commit(BatchResult[] result) {
    for (K id : newIds) {
      idTable.append(id);
    }
    int nodeCount = from.nodeCount + newIds.size();
    SlotTrie rowTrie = from.rowDeltas;
    long deltaEntries = from.deltaEntries;
    long deltaRowBytes = from.deltaRowBytes;
    int[] changedRows = new int[rows.size() + newIds.size()];
    int rowCount = 0;
    int[] order = orderedRows != null ? orderedRows : rows.positionsByTarget();
    long entriesAdded = 0;
    long entriesRemoved = 0;
    warmPaths(rowTrie, order);
    SlotTrie.Editor rowEdit = null;
    for (int position : order) {
      RowEditor row = rows.get(position);
      entriesAdded += row.adds();
      entriesRemoved += row.removes();
      if (!row.changed()) {
        continue;
      }
      if (rowEdit == null) {
        rowEdit = rowTrie.edit();
      }
      rowEdit.set(row.target, row.encode());
      deltaEntries += row.entryChange();
      deltaRowBytes += row.byteChange();
      if (row.target < from.nodeCount) {
        changedRows[rowCount++] = row.target;
      }
    }
    if (rowEdit != null) {
      rowTrie = rowEdit.finish();
    }
    for (int k = 0; k < newIds.size(); k++) {
      changedRows[rowCount++] = from.nodeCount + k;
    }
    SlotTrie featureTrie = from.featureRows;
    long featureRowBytes = from.featureRowBytes;
    int missing = from.missingFeatures + newIds.size();
    int[] changedFeatures = new int[features.size()];
    int featureCount = 0;
    if (!features.isEmpty()) {
      SlotTrie.Editor edit = featureTrie.edit();
      for (Map.Entry<Integer, float[]> entry : features.entrySet()) {
        int node = entry.getKey();
        float[] row = entry.getValue();
        float[] old = node < from.nodeCount ? from.featureRowOrNull(node) : null;
        if (old != null && Arrays.equals(old, row)) {
          continue;
        }
        Object previous = edit.set(node, row);
        featureRowBytes += Layout.arrayBytes(row.length, 4);
        if (previous != null) {
          featureRowBytes -= Layout.arrayBytes(((float[]) previous).length, 4);
        }
        if (old == null) {
          missing--;
        }
        changedFeatures[featureCount++] = node;
      }
      featureTrie = edit.finish();
    }
    changedRows = sorted(changedRows, rowCount);
    changedFeatures = sorted(changedFeatures, featureCount);
    long version = from.version + 1;
    result[0] =
        new BatchResult(
            version, changedRows, changedFeatures, newIds.size(), entriesAdded, entriesRemoved);
    return new LiveSnapshot<>(
        version,
        nodeCount,
        from.edgeCount + entriesAdded - entriesRemoved,
        from.base,
        rowTrie,
        deltaEntries,
        deltaRowBytes,
        from.baseFeatures,
        from.baseMissing,
        featureTrie,
        featureRowBytes,
        missing,
        idTable.view());
  }

  /**
   * Reads the trie paths of the changed rows in one staged pass ({@link SlotTrie#getAll}), so that
   * the path copying that follows finds them in cache instead of missing once per row. Only
   * performance depends on it.
   */
  private void warmPaths(SlotTrie trie, int[] order) {
    int[] targets = new int[order.length];
    int count = 0;
    for (int position : order) {
      RowEditor row = rows.get(position);
      if (row.changed() && row.target < from.nodeCount) {
        targets[count++] = row.target;
      }
    }
    trie.getAll(targets, count, new Object[count]);
  }

  private static int[] sorted(int[] values, int count) {
    int[] out = count == values.length ? values : Arrays.copyOf(values, count);
    Arrays.sort(out);
    return out;
  }
}
