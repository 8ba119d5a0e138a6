package dev.heed.live;

import dev.heed.classify.NodeFeatures;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.function.BooleanSupplier;

/**
 * Folds a snapshot's deltas into a new base CSR and feature matrix, then carries over what writers
 * changed meanwhile. The idea follows LLAMA's merge of delta levels into a fresh CSR (Macko,
 * Marathe, Margo, Seltzer, "LLAMA: Efficient Graph Analytics Using Large Multiversioned Arrays",
 * ICDE 2015), done here without stopping writers for the whole merge:
 *
 * <ol>
 *   <li>the constructor builds the new base from the snapshot the compaction started at (O(n + E),
 *       no lock);
 *   <li>{@link #rebase} re-expresses the rows and features that batches changed after that snapshot
 *       as deltas over the new base, from a later snapshot (O(changed rows' lengths), called
 *       without the lock while many rows are pending, and a last time under it);
 *   <li>{@link #finish} makes the snapshot to publish: the latest version's content over the new
 *       base, with the same version number.
 * </ol>
 *
 * A row changed several times is rebased from the latest snapshot that saw it change, so the result
 * holds exactly the latest content. Confined to the compacting thread.
 */
final class Compaction<K> {

  private static final int CANCEL_CHECK_ROWS = 1 << 16;

  private final CsrGraph base;
  private final NodeFeatures baseFeatures;
  private final long[] baseMissing;
  private final SlotTrie.Editor rows = SlotTrie.EMPTY.edit();
  private final SlotTrie.Editor features = SlotTrie.EMPTY.edit();
  private long deltaEntries;
  private long deltaRowBytes;
  private long featureRowBytes;
  private int[] scratch = new int[16];

  Compaction(LiveSnapshot<K> start, BooleanSupplier cancelled) {
    this.base = graphOf(start, cancelled);
    if (start.featureRows.isEmpty() && start.baseFeatures.nodeCount() == start.nodeCount) {
      this.baseFeatures = start.baseFeatures;
      this.baseMissing = start.baseMissing;
    } else {
      int n = start.nodeCount;
      int f = start.featureCount();
      float[] values = new float[Math.multiplyExact(n, f)];
      long[] missing = new long[(n + 63) >>> 6];
      boolean anyMissing = false;
      for (int node = 0; node < n; node++) {
        if (start.hasFeatures(node)) {
          start.copyRow(node, values, node * f);
        } else {
          missing[node >>> 6] |= 1L << node;
          anyMissing = true;
        }
        checkCancelled(node, cancelled);
      }
      this.baseFeatures = NodeFeatures.ofRowMajor(values, n, f);
      this.baseMissing = anyMissing ? missing : null;
    }
  }

  /** Returns the snapshot's rows as one CSR graph: its base when it has no deltas. O(n + E). */
  static CsrGraph graphOf(LiveSnapshot<?> snapshot) {
    return graphOf(snapshot, () -> false);
  }

  private static CsrGraph graphOf(LiveSnapshot<?> snapshot, BooleanSupplier cancelled) {
    int n = snapshot.nodeCount;
    if (snapshot.rowDeltas.isEmpty() && snapshot.base.nodeCount() == n) {
      return snapshot.base;
    }
    int[] offsets = new int[n + 1];
    int[] columns = new int[Math.toIntExact(snapshot.edgeCount)];
    int written = 0;
    for (int row = 0; row < n; row++) {
      offsets[row] = written;
      written += snapshot.copyRow(row, columns, written);
      checkCancelled(row, cancelled);
    }
    offsets[n] = written;
    return CsrGraph.of(offsets, columns);
  }

  /** Returns the snapshot's features as one matrix; every node must have features. O(n·f). */
  static NodeFeatures featuresOf(LiveSnapshot<?> snapshot) {
    int n = snapshot.nodeCount;
    if (snapshot.featureRows.isEmpty()
        && snapshot.baseFeatures.nodeCount() == n
        && snapshot.baseMissing == null) {
      return snapshot.baseFeatures;
    }
    int f = snapshot.featureCount();
    float[] values = new float[Math.multiplyExact(n, f)];
    for (int node = 0; node < n; node++) {
      snapshot.copyRow(node, values, node * f);
    }
    return NodeFeatures.ofRowMajor(values, n, f);
  }

  private static void checkCancelled(int row, BooleanSupplier cancelled) {
    if ((row & (CANCEL_CHECK_ROWS - 1)) == 0 && cancelled.getAsBoolean()) {
      throw new IllegalStateException("compaction stopped: the live graph was closed");
    }
  }

  /**
   * Re-expresses the given rows and features of {@code latest} over the new base.
   *
   * @param changed sorted node lists: [0] rows, [1] features, changed since the previous call
   */
  void rebase(LiveSnapshot<K> latest, int[][] changed) {
    int baseNodes = base.nodeCount();
    for (int node : changed[0]) {
      int length = latest.degree(node);
      if (scratch.length < length) {
        scratch = new int[Math.max(length, scratch.length * 2)];
      }
      latest.copyRow(node, scratch, 0);
      int start = node < baseNodes ? base.rowStart(node) : 0;
      int end = node < baseNodes ? base.rowEnd(node) : 0;
      Object delta = RowDeltas.diff(base, start, end, scratch, length);
      Object previous = rows.set(node, delta);
      deltaEntries += RowDeltas.entries(delta) - RowDeltas.entries(previous);
      deltaRowBytes += RowDeltas.bytes(delta) - RowDeltas.bytes(previous);
    }
    float[] baseRow = new float[baseFeatures.featureCount()];
    for (int node : changed[1]) {
      float[] row = latest.featureRowOrNull(node);
      if (row != null && node < baseFeatures.nodeCount() && hasBaseFeatures(node)) {
        baseFeatures.copyRow(node, baseRow, 0);
        if (Arrays.equals(baseRow, row)) {
          row = null;
        }
      }
      float[] previous = (float[]) features.set(node, row);
      featureRowBytes +=
          (row == null ? 0 : Layout.arrayBytes(row.length, 4))
              - (previous == null ? 0 : Layout.arrayBytes(previous.length, 4));
    }
  }

  private boolean hasBaseFeatures(int node) {
    return baseMissing == null || (baseMissing[node >>> 6] & (1L << node)) == 0;
  }

  /** Returns {@code latest}'s content over the new base, after the last {@link #rebase}. */
  LiveSnapshot<K> finish(LiveSnapshot<K> latest) {
    return new LiveSnapshot<>(
        latest.version,
        latest.nodeCount,
        latest.edgeCount,
        base,
        rows.finish(),
        deltaEntries,
        deltaRowBytes,
        baseFeatures,
        baseMissing,
        features.finish(),
        featureRowBytes,
        latest.missingFeatures,
        latest.ids);
  }
}
