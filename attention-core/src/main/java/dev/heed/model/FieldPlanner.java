package dev.heed.model;

import dev.heed.attention.MemoryBudget;
import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CsrGraph;
import dev.heed.graph.NeighbourRows;
import java.util.Arrays;
import java.util.List;
import java.util.Locale;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * Plans {@link ReceptiveField}s: walks a model's layers from the last to the first, collecting the
 * rows each layer must compute and read, and builds each attention layer's local CSR pattern.
 *
 * <p>Cost of a local field: O(Σ deg) over the nodes whose rows are read, plus sorting each local
 * row, with hash-map lookups from global to local ids in a pooled {@link FieldScratch}; nothing
 * proportional to the graph's node count. A whole-graph field (a layer over the complete pattern)
 * costs O(n + E) to copy the graph from {@link NeighbourRows} unless it is already a {@link
 * CsrGraph}.
 *
 * <p>Thread safety: stateless; each call borrows its own scratch.
 */
final class FieldPlanner {

  private static final Logger LOG = LoggerFactory.getLogger(FieldPlanner.class);

  private static final String RAISE =
      "raise the cap (FieldCap; for NodeClassifier, ClassifyOptions.withFieldCap) or classify"
          + " fewer targets per call";

  private final List<Layer> layers;
  private final NeighbourRows graph;
  private final int nodeCount;
  private final FieldCap cap;
  private final FieldScratch s;
  private final int hops;
  private final KeptHubRows kept; // null: every row is computed
  private final boolean computeTargets;
  private int size;
  private int keptSize;
  private int targetCount;
  private long entriesBefore;
  private int hop;
  private String layerName;

  private FieldPlanner(
      List<Layer> layers,
      NeighbourRows graph,
      FieldCap cap,
      FieldScratch scratch,
      int hops,
      KeptHubRows kept,
      boolean computeTargets) {
    this.layers = layers;
    this.graph = graph;
    this.nodeCount = graph.nodeCount();
    this.cap = cap;
    this.s = scratch;
    this.hops = hops;
    this.kept = kept;
    this.computeTargets = computeTargets;
  }

  /**
   * Plans the field of {@code targets} (already range-checked) for {@code layers}: a local field,
   * or a whole-graph one if a layer attends over every node.
   */
  static ReceptiveField plan(List<Layer> layers, NeighbourRows graph, int[] targets, FieldCap cap) {
    return plan(layers, graph, targets, cap, null, false);
  }

  /**
   * Plans the field of {@code targets} as {@link #plan(List, NeighbourRows, int[], FieldCap)} does,
   * stopping at the rows {@code kept} holds (when not null): a kept node's outputs are read from
   * it, so its row is never fetched. With {@code computeTargets}, kept targets are computed from
   * their inputs like any other target (for attention weights); otherwise they are lookups.
   */
  static ReceptiveField plan(
      List<Layer> layers,
      NeighbourRows graph,
      int[] targets,
      FieldCap cap,
      KeptHubRows kept,
      boolean computeTargets) {
    int hops = 0;
    Layer everyNode = null;
    for (Layer layer : layers) {
      switch (layer.reach()) {
        case IN_NEIGHBOURS -> hops++;
        case EVERY_NODE -> everyNode = everyNode == null ? layer : everyNode;
        case SELF -> {}
      }
    }
    if (everyNode != null) {
      String reason =
          "layer '" + everyNode.name() + "' attends over every node (full self-attention)";
      return wholeFromRows(layers, graph, targets, cap, reason);
    }
    FieldScratch scratch = FieldScratch.borrow();
    try {
      return new FieldPlanner(
              layers, graph, cap, scratch, hops, hops == 0 ? null : kept, computeTargets)
          .local(targets);
    } finally {
      FieldScratch.release(scratch);
    }
  }

  /**
   * Plans a whole-graph field over {@code graph}, after checking its size against the cap: a {@link
   * CsrGraph} is used as it is; other row sources are copied into one (their degrees are summed and
   * checked before any row is copied).
   */
  static ReceptiveField wholeFromRows(
      List<Layer> layers, NeighbourRows graph, int[] targets, FieldCap cap, String reason) {
    if (graph instanceof CsrGraph csr) {
      return whole(layers, (AttentionPattern) csr, targets, cap, reason);
    }
    int n = graph.nodeCount();
    logWhole(targets, n, reason);
    checkWhole(layers, n, -1, targets, cap, reason);
    int[] offsets = new int[n + 1];
    for (int v = 0; v < n; v++) {
      long end = (long) offsets[v] + graph.degree(v);
      if (end > Integer.MAX_VALUE - 8) {
        throw new IllegalArgumentException(
            "the graph has more than "
                + (Integer.MAX_VALUE - 8)
                + " entries, too many for one CSR pattern");
      }
      offsets[v + 1] = (int) end;
    }
    checkWhole(layers, n, offsets[n], targets, cap, reason);
    MemoryBudget.check(
        "the receptive field's rows (" + n + " nodes, " + offsets[n] + " entries)",
        4L * offsets[n]);
    int[] columns = new int[offsets[n]];
    for (int v = 0; v < n; v++) {
      int written = graph.copyRow(v, columns, offsets[v]);
      if (written != offsets[v + 1] - offsets[v]) {
        throw rowMismatch(v, offsets[v + 1] - offsets[v], written);
      }
    }
    return ReceptiveField.whole(layers, CsrGraph.of(offsets, columns), targetCount(targets, n));
  }

  /**
   * Plans a whole-graph field over {@code pattern}, after checking its size against the cap.
   *
   * @param targets the requested nodes, or null when every node is requested
   */
  static ReceptiveField whole(
      List<Layer> layers, AttentionPattern pattern, int[] targets, FieldCap cap, String reason) {
    logWhole(targets, pattern.nodeCount(), reason);
    checkWhole(layers, pattern.nodeCount(), pattern.entryCount(), targets, cap, reason);
    return ReceptiveField.whole(layers, pattern, targetCount(targets, pattern.nodeCount()));
  }

  /** Says at debug level when chosen targets cost a whole-graph pass. */
  private static void logWhole(int[] targets, int n, String reason) {
    if (targets != null) {
      LOG.debug(
          "{}: scoring {} chosen node(s) runs over the whole graph ({} nodes)",
          reason,
          targets.length,
          n);
    }
  }

  /**
   * Checks the whole graph's node count, and its entry count if known ({@code graphEntries >= 0}),
   * against the cap.
   */
  private static void checkWhole(
      List<Layer> layers, int n, long graphEntries, int[] targets, FieldCap cap, String reason) {
    int target = targets == null || targets.length == 0 ? -1 : targets[0];
    String who =
        targets == null
            ? "classifying every node"
            : targets.length == 0
                ? "the call"
                : "classifying node "
                    + target
                    + (targets.length > 1 ? " (and " + (targets.length - 1) + " more)" : "");
    if (n > cap.maxNodes()) {
      throw new ReceptiveFieldTooLargeException(
          String.format(
              Locale.ROOT,
              "receptive field too large: %s needs the whole graph because %s, and the graph's"
                  + " %,d nodes pass the cap of %,d nodes; %s",
              who,
              reason,
              n,
              cap.maxNodes(),
              RAISE),
          target,
          false,
          n,
          cap.maxNodes());
    }
    if (graphEntries < 0) {
      return;
    }
    long total = 0;
    for (Layer layer : layers) {
      total +=
          switch (layer.reach()) {
            case SELF -> 0;
            case IN_NEIGHBOURS -> graphEntries;
            case EVERY_NODE -> (long) n * n;
          };
    }
    if (total > cap.maxEntries()) {
      throw new ReceptiveFieldTooLargeException(
          String.format(
              Locale.ROOT,
              "receptive field too large: %s needs the whole graph because %s, and its %,d"
                  + " attention entries over all layers pass the cap of %,d entries; %s",
              who,
              reason,
              total,
              cap.maxEntries(),
              RAISE),
          target,
          true,
          total,
          cap.maxEntries());
    }
  }

  /** The number of distinct targets; n when every node is requested (null). */
  private static int targetCount(int[] targets, int n) {
    if (targets == null) {
      return n;
    }
    int[] sorted = targets.clone();
    Arrays.sort(sorted);
    int count = 0;
    for (int k = 0; k < sorted.length; k++) {
      if (k == 0 || sorted[k] != sorted[k - 1]) {
        count++;
      }
    }
    return count;
  }

  private static IllegalArgumentException rowMismatch(int node, int degree, int written) {
    return new IllegalArgumentException(
        "the graph's row of node "
            + node
            + " changed while it was read: degree "
            + degree
            + " but copyRow wrote "
            + written
            + " ids; a NeighbourRows must answer for one fixed version of the graph");
  }

  /**
   * Plans a local field: targets first, then each hop's new nodes. Kept nodes (with {@link #kept})
   * are numbered apart, in the order met, and follow the computed nodes in every layer's input: an
   * attention layer reads its computed rows, then the kept rows met so far.
   */
  private ReceptiveField local(int[] targets) {
    for (int target : targets) {
      if (kept != null && !computeTargets && kept.isKept(target)) {
        if (s.ids.putIfAbsent(target, KeptHubRows.KEPT_FLAG | keptSize) < 0) {
          targetCount++;
          addKept(target);
        }
      } else if (s.ids.putIfAbsent(target, size) < 0) {
        targetCount++;
        add(target, size);
      }
    }
    int keptTargets = keptSize;
    int count = layers.size();
    int[] rowsRead = new int[count];
    int[] rowsComputed = new int[count];
    int[] computedRead = new int[count];
    long[] entries = new long[count];
    s.offsets[0] = 0;
    int fetched = 0;
    int rows = size;
    int firstAttention = count;
    for (int l = count - 1; l >= 0; l--) {
      Layer layer = layers.get(l);
      rowsComputed[l] = rows;
      if (layer.reach() == Layer.Reach.IN_NEIGHBOURS) {
        firstAttention = l;
        hop++;
        layerName = layer.name();
        for (int v = fetched; v < rows; v++) {
          fetchRow(v);
        }
        fetched = Math.max(fetched, rows);
        entries[l] = s.offsets[rows];
        entriesBefore += entries[l];
        rows = size;
        computedRead[l] = size;
        rowsRead[l] = size + keptSize;
      } else {
        rowsRead[l] = rows;
      }
    }
    // The layers before the first attention layer map every feature row, kept nodes' included.
    for (int l = 0; l < firstAttention; l++) {
      rowsRead[l] = size + keptSize;
      rowsComputed[l] = size + keptSize;
    }
    AttentionPattern[] patterns = new AttentionPattern[count];
    for (int l = 0; l < count; l++) {
      if (layers.get(l).reach() == Layer.Reach.IN_NEIGHBOURS) {
        int keptRead = rowsRead[l] - computedRead[l];
        patterns[l] = localPattern(rowsComputed[l], computedRead[l], keptRead);
      } else {
        computedRead[l] = rowsRead[l];
      }
    }
    int[] ids = Arrays.copyOf(s.globalIds, size + keptSize);
    System.arraycopy(s.keptGlobals, 0, ids, size, keptSize);
    return ReceptiveField.local(
        layers,
        nodeCount,
        ids,
        size,
        targetCount,
        keptTargets,
        rowsRead,
        rowsComputed,
        computedRead,
        entries,
        patterns,
        kept);
  }

  /** Numbers a new node (already put in the id map as {@code size}). */
  private void add(int global, int origin) {
    if (kept != null && size + 1 >= KeptHubRows.KEPT_FLAG) {
      throw new IllegalArgumentException(
          "the receptive field holds more than "
              + KeptHubRows.KEPT_FLAG
              + " nodes, too many for one call; classify fewer targets per call");
    }
    s.ensureNodes(size + 1);
    s.globalIds[size] = global;
    s.origins[size] = origin;
    size++;
    if (size + keptSize > cap.maxNodes()) {
      throw tooLarge(false, size + keptSize, cap.maxNodes());
    }
  }

  /** Numbers a new kept node (already put in the id map as {@code KEPT_FLAG | keptSize}). */
  private void addKept(int global) {
    s.ensureKept(keptSize + 1);
    s.keptGlobals[keptSize++] = global;
    if (size + keptSize > cap.maxNodes()) {
      throw tooLarge(false, size + keptSize, cap.maxNodes());
    }
  }

  /**
   * Appends local row {@code v}: the node's sources in local ids (numbering new ones), sorted.
   * Checks the entry cap before reading the row, and that the row is strictly increasing and in
   * range.
   */
  private void fetchRow(int v) {
    int global = s.globalIds[v];
    int degree = graph.degree(global);
    int base = s.offsets[v];
    if (entriesBefore + base + degree > cap.maxEntries()) {
      throw tooLarge(true, entriesBefore + base + degree, cap.maxEntries());
    }
    if ((long) base + degree > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "the receptive field at layer '"
              + layerName
              + "' holds more than "
              + (Integer.MAX_VALUE - 8)
              + " entries, too many for one local pattern; classify fewer targets per call");
    }
    s.ensureRow(degree);
    s.ensureColumns(base + degree);
    int written = graph.copyRow(global, s.row, 0);
    if (written != degree) {
      throw rowMismatch(global, degree, written);
    }
    // Ids numbered while mapping this row are increasing and above every older id, so the sorted
    // row is the older ids, sorted, then the new ones in the order met: only the older ids (moved
    // into the row buffer, behind the read position) need sorting.
    // Kept sources (ids with KEPT_FLAG, above every computed id) go last, sorted.
    int origin = s.origins[v];
    int threshold = size;
    int older = 0;
    int fresh = 0;
    int keptSources = 0;
    int previous = -1;
    for (int k = 0; k < degree; k++) {
      int source = s.row[k];
      if (source <= previous || source >= nodeCount) {
        throw badRow(global, k, previous, source);
      }
      previous = source;
      int local;
      if (kept != null && kept.isKept(source)) {
        local = s.ids.putIfAbsent(source, KeptHubRows.KEPT_FLAG | keptSize);
        if (local < 0) {
          local = KeptHubRows.KEPT_FLAG | keptSize;
          addKept(source);
        }
      } else {
        local = s.ids.putIfAbsent(source, size);
        if (local < 0) {
          local = size;
          add(source, origin);
        }
      }
      if (local >= KeptHubRows.KEPT_FLAG) {
        s.ensureKeptRow(keptSources + 1);
        s.keptRow[keptSources++] = local;
      } else if (local < threshold) {
        s.row[older++] = local;
      } else {
        s.columns[base + fresh++] = local;
      }
    }
    if (older > 0) {
      Arrays.sort(s.row, 0, older);
      System.arraycopy(s.columns, base, s.columns, base + older, fresh);
      System.arraycopy(s.row, 0, s.columns, base, older);
    }
    if (keptSources > 0) {
      Arrays.sort(s.keptRow, 0, keptSources);
      System.arraycopy(s.keptRow, 0, s.columns, base + older + fresh, keptSources);
    }
    s.offsets[v + 1] = base + degree;
  }

  private IllegalArgumentException badRow(int node, int k, int previous, int source) {
    String what =
        source < 0 || source >= nodeCount
            ? "source " + source + " is out of range 0.." + (nodeCount - 1)
            : "sources must be strictly increasing, but " + previous + " is followed by " + source;
    return new IllegalArgumentException(
        "the graph's row of node " + node + " is invalid at position " + k + ": " + what);
  }

  /**
   * The local pattern of an attention layer: square over {@code read + keptRead} nodes, rows {@code
   * 0..computed-1} as fetched, the rest empty; kept node k is column {@code read + k}.
   */
  private CsrGraph localPattern(int computed, int read, int keptRead) {
    int entries = s.offsets[computed];
    int nodes = read + keptRead;
    int[] offsets = new int[nodes + 1];
    System.arraycopy(s.offsets, 0, offsets, 0, computed + 1);
    Arrays.fill(offsets, computed + 1, nodes + 1, entries);
    int[] columns = Arrays.copyOf(s.columns, entries);
    if (keptSize > 0) {
      int shift = read - KeptHubRows.KEPT_FLAG;
      for (int e = 0; e < entries; e++) {
        if (columns[e] >= KeptHubRows.KEPT_FLAG) {
          columns[e] += shift;
        }
      }
    }
    return CsrGraph.of(offsets, columns);
  }

  /** The cap error, charged to the target from which most of the counted nodes were reached. */
  private ReceptiveFieldTooLargeException tooLarge(boolean entriesBound, long count, long bound) {
    int[] reached = new int[Math.max(1, targetCount)];
    for (int local = 0; local < size; local++) {
      int origin = s.origins[local];
      if (origin >= 0 && origin < reached.length) {
        reached[origin]++;
      }
    }
    int charged = 0;
    for (int t = 1; t < reached.length; t++) {
      if (reached[t] > reached[charged]) {
        charged = t;
      }
    }
    int target = s.globalIds[charged];
    String field =
        targetCount <= 1
            ? "the receptive field of target " + target
            : String.format(
                Locale.ROOT,
                "the receptive field of %,d targets (most of it reached from target %d: %,d"
                    + " nodes)",
                targetCount,
                target,
                reached[charged]);
    String where =
        layerName == null
            ? "among the targets themselves"
            : String.format(Locale.ROOT, "by layer '%s' (hop %d of %d)", layerName, hop, hops);
    String message =
        String.format(
            Locale.ROOT,
            "receptive field too large: %s passes the cap of %,d %s: %,d %s counted %s, where"
                + " counting stopped; %s",
            field,
            bound,
            entriesBound ? "attention entries" : "nodes",
            count,
            entriesBound ? "entries" : "nodes",
            where,
            RAISE);
    return new ReceptiveFieldTooLargeException(message, target, entriesBound, count, bound);
  }
}
