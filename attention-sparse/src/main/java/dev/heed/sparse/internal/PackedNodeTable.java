package dev.heed.sparse.internal;

import static dev.heed.sparse.internal.AllHeadsMath.HEADS;

import dev.heed.attention.MemoryBudget;
import java.lang.ref.SoftReference;
import java.util.concurrent.atomic.AtomicBoolean;
import java.util.concurrent.atomic.AtomicReference;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The packed node table of the all-heads path (additive scores, 8 heads of 8 value floats, over a
 * CSR graph): its two layouts, and the kernel's spare table. Internal, not API.
 *
 * <p><b>Exact layout</b> ({@link ExactAllHeadsPass}): per node, its 8 key terms and then its 64
 * value floats, {@link #EXACT_ROW} = 72 floats (288 bytes), node c's row at {@link #EXACT_OFFSET}
 * {@code + c · 72}. <b>Factored layout</b> ({@link FactoredAllHeadsPass}): per node, its 8 factors
 * {@code E = exp(k - K)}, its 8 factors {@code F = exp(slope · (k - K))}, then its 64 value floats,
 * {@link #FACTORED_ROW} = 80 floats (320 bytes), at {@link #FACTORED_OFFSET} {@code + c · 80}. A
 * table is sized for either. <b>Factored layout with bfloat16 values</b> ({@link
 * dev.heed.attention.NodeRowPrecision#BFLOAT16}): the same 8 E and 8 F factors as float32, then 32
 * words that each hold two bfloat16 values ({@link Bfloat16}), {@link #BFLOAT16_ROW} = 48 floats
 * (192 bytes, exactly three cache lines) at {@link #FACTORED_OFFSET} {@code + c · 48}: word {@code
 * j} holds value {@code j} in its low 16 bits and value {@code j + 32} in its high 16 bits, so one
 * 8-word vector load gives head {@code g} (a 16-bit shift) and head {@code g + 4} (a mask). The
 * words are stored in the {@code float[]} by their bits; a high half is a finite bfloat16, so no
 * word is a NaN pattern and every copy keeps its bits. Row positions are given as the start of a
 * node's value row ({@link #exactValueRow}, {@link #factoredValueRow}); the other terms lie a fixed
 * number of floats before it.
 *
 * <p>Why the bfloat16 row keeps its factors: a split layout (128-byte value rows on 128-byte
 * boundaries, the factors in 64-byte slots of their own, read first) cost 1.08–1.27× the CPU time
 * per call of this one on the R-MAT layer in reverse Cuthill–McKee order, the same bits out,
 * although the random-gather probe gathers 128-byte rows about 1.5× as fast as 192-byte ones: an
 * entry still reads three lines in two places, and the order already serves most of them from cache
 * ({@code benchmarks/RESULTS.md}).
 *
 * <p>Why: each entry of a row reads its source's key terms and value row at random. From the
 * caller's two arrays that is two random accesses, and as many cache lines as the arrays' alignment
 * makes them span: the data of a large {@code float[]} starts 16 bytes into a 64-byte line here
 * (the array header; G1 starts large arrays on a region boundary), so a 256-byte value row spans 5
 * lines and a 32-byte key row 1 or 2. In the table a node is one access of 5 lines. Alignment: the
 * exact layout's offset of 4 floats puts row 0 on a 32-byte boundary, and every row after it too
 * (288 is a multiple of 32), so 288 bytes never span 6 lines (1.38× slower with offset 0, R-MAT 1M
 * nodes, 2 threads); the factored layout's offset of 12 puts every 320-byte row on a 64-byte
 * boundary, exactly five lines. Wrong alignment (another collector, another header size) only costs
 * speed, never correctness.
 *
 * <p>Cost: the kernel fills the table once per call, one sequential pass that also does the input
 * check for NaN and infinities on key and value (so those arrays are read once, not twice). On
 * graphs of at least {@link TableRowReads#MIN_NODES} nodes it fills only the rows that rows of two
 * or more entries read ({@link TableRowReads}) and only checks the other nodes' inputs: on the
 * R-MAT 1M layer that leaves 38 % of the rows unwritten and took the fill from 24.6 to 19 ms. For
 * graphs whose table is smaller than {@link CsrKernelVariant#DEFAULT_MIN_PACKED_TABLE_BYTES} the
 * rows stay in cache anyway and the copy costs more than it saves; the kernel reads the caller's
 * arrays in place there.
 *
 * <p>Memory: the table is {@code 320·n} bytes (320 MiB for 1M nodes), allocated on the first call
 * that needs it. The kernel keeps one spare table between calls, softly referenced, so repeated
 * calls reuse it and the garbage collector can take it back when memory runs short; concurrent
 * calls that find the spare taken allocate their own. If the heap cannot hold a table, the call
 * reads the caller's arrays in place (same results, slower) and the first such call logs a warning.
 *
 * <p>Thread safety: the layout methods are stateless; the spare-table holder is safe for concurrent
 * calls; a table itself belongs to one call at a time.
 */
public final class PackedNodeTable {

  /**
   * Index of node 0's row in the exact layout: 4 floats, so that with a 16-byte array header on a
   * 64-byte boundary every 288-byte row starts on a 32-byte boundary.
   */
  public static final int EXACT_OFFSET = 4;

  /** Floats per node in the exact layout: 8 key terms, then 64 value floats (288 bytes). */
  public static final int EXACT_ROW = HEADS + HEADS * HEADS;

  /** Floats from the start of a node's key terms to its value row, in the exact layout. */
  public static final int EXACT_KEYS_BEFORE_VALUES = HEADS;

  /**
   * Index of node 0's row in the factored layout: 12 floats, so that with a 16-byte array header on
   * a 64-byte boundary every 320-byte row is exactly five cache lines.
   */
  public static final int FACTORED_OFFSET = 12;

  /** Floats per node in the factored layout: 8 E factors, 8 F factors, 64 value floats. */
  public static final int FACTORED_ROW = 2 * HEADS + HEADS * HEADS;

  /** Floats from the start of a node's E factors (its row) to its value row. */
  public static final int FACTORED_E_BEFORE_VALUES = 2 * HEADS;

  /** Floats from the start of a node's F factors to its value row. */
  public static final int FACTORED_F_BEFORE_VALUES = HEADS;

  /**
   * Floats per node in the factored layout with bfloat16 values: 8 E factors, 8 F factors, 32 words
   * of two bfloat16 values (192 bytes).
   */
  public static final int BFLOAT16_ROW = 2 * HEADS + HEADS * HEADS / 2;

  /** Most nodes a table can hold: one Java array of {@link #length} floats. */
  public static final int MAX_NODES = (Integer.MAX_VALUE - 8 - FACTORED_OFFSET) / FACTORED_ROW;

  private static final Logger LOG = LoggerFactory.getLogger(PackedNodeTable.class);

  private final AtomicReference<SoftReference<float[]>> spare = new AtomicReference<>();
  private final AtomicBoolean warnedNoRoom = new AtomicBoolean();

  /** Creates an empty holder of the spare table (one per kernel). */
  PackedNodeTable() {}

  /**
   * Returns the bytes of a table for n nodes.
   *
   * @param n node count, at most {@link #MAX_NODES}
   * @return the table's size in bytes
   */
  public static long bytes(int n) {
    return 4L * length(n);
  }

  /**
   * Returns the floats of a table for n nodes: room for either layout.
   *
   * @param n node count, at most {@link #MAX_NODES}
   * @return the table's length
   */
  public static int length(int n) {
    assert n <= MAX_NODES;
    return FACTORED_OFFSET + n * FACTORED_ROW;
  }

  /**
   * Returns the floats of a table for n nodes in the factored layout with bfloat16 values.
   *
   * @param n node count, at most {@link #MAX_NODES}
   * @return the table's length
   */
  public static int bfloat16Length(int n) {
    assert n <= MAX_NODES;
    return FACTORED_OFFSET + n * BFLOAT16_ROW;
  }

  /**
   * Returns the start of node c's 32 value words in the factored layout with bfloat16 values; its E
   * and F factors start {@link #FACTORED_E_BEFORE_VALUES} and {@link #FACTORED_F_BEFORE_VALUES}
   * floats before, as in the float32 factored layout.
   *
   * @param c the node
   * @return the index of the node's first value word
   */
  public static int bfloat16ValueRow(int c) {
    return FACTORED_OFFSET + c * BFLOAT16_ROW + FACTORED_E_BEFORE_VALUES;
  }

  /**
   * Returns the start of node c's value row in the exact layout; its key terms are the {@link
   * #EXACT_KEYS_BEFORE_VALUES} floats before.
   *
   * @param c the node
   * @return the index of the node's first value float
   */
  public static int exactValueRow(int c) {
    return EXACT_OFFSET + c * EXACT_ROW + EXACT_KEYS_BEFORE_VALUES;
  }

  /**
   * Returns the start of node c's value row in the factored layout; its E and F factors start
   * {@link #FACTORED_E_BEFORE_VALUES} and {@link #FACTORED_F_BEFORE_VALUES} floats before.
   *
   * @param c the node
   * @return the index of the node's first value float
   */
  public static int factoredValueRow(int c) {
    return FACTORED_OFFSET + c * FACTORED_ROW + FACTORED_E_BEFORE_VALUES;
  }

  /** Takes a table for n nodes in either float32 layout: {@code take(n, length(n))}. */
  float[] take(int n) {
    return take(n, length(n));
  }

  /**
   * Takes the spare table if it holds at least {@code length} floats, else allocates one. Its
   * contents are undefined; the caller fills every node's row before reading any.
   *
   * @param n the node count, for the warning
   * @param length floats needed: {@link #length} or {@link #bfloat16Length} of n
   * @return the table, or null if the heap has no room for it (logged once per kernel)
   */
  float[] take(int n, int length) {
    SoftReference<float[]> held = spare.getAndSet(null);
    float[] table = held == null ? null : held.get();
    if (table != null && table.length >= length) {
      return table;
    }
    table = null; // a spare too small for n can be collected before the new table is allocated
    if (MemoryBudget.fits(4L * length)) {
      try {
        return new float[length];
      } catch (OutOfMemoryError e) {
        // one large allocation that failed, with nothing else half done: safe to carry on without
      }
    }
    if (warnedNoRoom.compareAndSet(false, true)) {
      LOG.warn(
          "the sparse kernel's packed node table ({} MiB for {} nodes) does not fit in the heap"
              + " budget; reading keys and values in place instead (same results, slower). Raise"
              + " -Xmx (or -D{}) to use it.",
          (4L * length) >> 20,
          n,
          MemoryBudget.MAX_BYTES_PROPERTY);
    }
    return null;
  }

  /** Keeps {@code table} as the spare for the next call, replacing any spare now held. */
  void giveBack(float[] table) {
    spare.set(new SoftReference<>(table));
  }
}
