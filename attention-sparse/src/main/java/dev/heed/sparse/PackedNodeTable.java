package dev.heed.sparse;

import dev.heed.sparse.internal.RowMath;
import java.lang.ref.SoftReference;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicReference;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The packed node table of the all-heads path (additive scores, 8 heads of 8 value floats, over a
 * CSR graph), in one of two layouts. Exact ({@code -Dheed.sparse.factor=false}): for every node,
 * its 8 key terms and then its 64 value floats, {@link RowMath#PACKED_ROW} = 72 floats (288 bytes)
 * per node, node c's row at {@link #OFFSET} {@code + c · 72}. Factored (the default; see {@link
 * CsrRowPass}): its 8 factors {@code exp(k - K)}, its 8 factors {@code exp(slope · (k - K))}, then
 * its 64 value floats, {@link RowMath#FACTORED_ROW} = 80 floats (320 bytes) per node, at {@link
 * #FACTORED_OFFSET} {@code + c · 80}: 12 floats put every row on a 64-byte boundary, five whole
 * lines, as many as the exact layout's 288 bytes span. A table is sized for either. Internal.
 *
 * <p>Why: each entry of a row reads its source's key terms and value row at random. From the
 * caller's two arrays that is two random accesses, and as many cache lines as the arrays' alignment
 * makes them span: the data of a large {@code float[]} starts 16 bytes into a 64-byte line here
 * (the array header; G1 starts large arrays on a region boundary), so a 256-byte value row spans 5
 * lines and a 32-byte key row 1 or 2. In the packed table a node is one access of 5 lines: {@link
 * #OFFSET} 4 floats puts row 0 on a 32-byte boundary, and every row after it too (288 is a multiple
 * of 32), so 288 bytes never span 6 lines. Measured on R-MAT, 1M nodes, 2 threads, the offset alone
 * mattered: 1.38× slower with offset 0 (rows on 16-byte boundaries) than with 4. Wrong alignment
 * (another collector, another header size) only costs speed, never correctness.
 *
 * <p>Cost: the kernel fills the table once per call, one sequential pass that also does the input
 * check for NaN and infinities on key and value (so those arrays are read once, not twice). For
 * graphs whose table is smaller than {@link CsrAttentionKernel#DEFAULT_MIN_PACKED_TABLE_BYTES} the
 * rows stay in cache anyway and the copy costs more than it saves; the kernel reads the caller's
 * arrays in place there.
 *
 * <p>Memory: the table is {@code 320·n} bytes (320 MiB for 1M nodes), allocated on the first call
 * that needs it. The kernel keeps one spare table between calls, softly referenced, so repeated
 * calls reuse it and the garbage collector can take it back when memory runs short; concurrent
 * calls that find the spare taken allocate their own. If the heap cannot hold a table, the call
 * reads the caller's arrays in place (same results, slower) and the first such call logs a warning.
 * {@code -Dheed.sparse.pack=false} turns the table off (for measurements, or where that memory
 * matters more than the speed).
 *
 * <p>Thread safety: the spare-table holder is safe for concurrent calls; a table itself belongs to
 * one call at a time.
 */
final class PackedNodeTable {

  /** Whether calls that qualify use the table; {@code -Dheed.sparse.pack=false} turns it off. */
  static final boolean ENABLED =
      Boolean.parseBoolean(System.getProperty("heed.sparse.pack", "true"));

  /**
   * Index of node 0's row: 4 floats, so that with a 16-byte array header on a 64-byte boundary
   * every 288-byte row starts on a 32-byte boundary (see the class comment).
   */
  static final int OFFSET = 4;

  /**
   * Index of node 0's row in the factored layout: 12 floats, so that with a 16-byte array header on
   * a 64-byte boundary every 320-byte row is exactly five cache lines.
   */
  static final int FACTORED_OFFSET = 12;

  /** Most nodes a table can hold: one Java array of {@code OFFSET + 72·n} floats. */
  static final int MAX_NODES = (Integer.MAX_VALUE - 8 - FACTORED_OFFSET) / RowMath.FACTORED_ROW;

  private static final Logger LOG = LoggerFactory.getLogger(PackedNodeTable.class);

  private final AtomicReference<SoftReference<float[]>> spare = new AtomicReference<>();
  private final AtomicBoolean warnedNoRoom = new AtomicBoolean();

  /** Returns the bytes of the table for n nodes. */
  static long bytes(int n) {
    return 4L * length(n);
  }

  /**
   * Returns the start of node c's value row in the table (its key terms are the 8 floats before).
   */
  static int valueRow(int c) {
    return OFFSET + c * RowMath.PACKED_ROW + RowMath.ALL_HEADS;
  }

  /**
   * Returns the start of node c's value row in the factored layout (its E and F factors are the 16
   * floats before).
   */
  static int factoredValueRow(int c) {
    return FACTORED_OFFSET + c * RowMath.FACTORED_ROW + 2 * RowMath.ALL_HEADS;
  }

  /** Floats of a table for n nodes: room for either layout. */
  static int length(int n) {
    assert n <= MAX_NODES;
    return FACTORED_OFFSET + n * RowMath.FACTORED_ROW;
  }

  /**
   * Takes the spare table if it holds at least n nodes, else allocates one. Its contents are
   * undefined; the caller fills every node's row before reading any.
   *
   * @return the table, or null if the heap has no room for it (logged once per kernel)
   */
  float[] take(int n) {
    SoftReference<float[]> held = spare.getAndSet(null);
    float[] table = held == null ? null : held.get();
    if (table != null && table.length >= length(n)) {
      return table;
    }
    table = null; // a spare too small for n can be collected before the new table is allocated
    try {
      return new float[length(n)];
    } catch (OutOfMemoryError e) {
      // one large allocation that failed, with nothing else half done: safe to carry on without
      if (warnedNoRoom.compareAndSet(false, true)) {
        LOG.warn(
            "the sparse kernel's packed node table ({} MiB for {} nodes) does not fit in the heap;"
                + " reading keys and values in place instead (same results, slower). Raise -Xmx,"
                + " or set -Dheed.sparse.pack=false to stop trying.",
            bytes(n) >> 20,
            n);
      }
      return null;
    }
  }

  /** Keeps {@code table} as the spare for the next call, replacing any spare now held. */
  void giveBack(float[] table) {
    spare.set(new SoftReference<>(table));
  }
}
