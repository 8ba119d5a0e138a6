package dev.heed.spark;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.graph.CsrGraph;
import dev.heed.model.LayerSteps;
import java.util.ArrayList;
import java.util.Arrays;
import java.util.Iterator;
import java.util.List;
import java.util.NoSuchElementException;
import java.util.Objects;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;

/**
 * One attention layer over one partition of row parts, sorted by (target, part, tag): each part
 * starts with its target's query record (tag 0: query row, layer input, part count) followed by its
 * entries (tag 1: the source's key and value rows). Whole rows (one part) are gathered into a
 * partition-local CSR block of at most {@link #BLOCK_ENTRIES} entries (or one longer row) and run
 * through Heed's sparse kernel, then finished (heads combined, bias, residual, activation, and the
 * per-node layers up to the next attention layer); each yields a {@code FINAL} record with the
 * node's next input. A part of a split row folds its entries into a {@link PartialSoftmax} in
 * float64 and yields a {@code PARTIAL} record, merged later by {@link SplitRowMerge}.
 *
 * <p>With {@code explain} k &gt; 0 (the last attention layer of a classifier asked for its top
 * neighbours), entries carry their source id (column 6), the kernel also writes the weights, and
 * each {@code FINAL} record ends with the row's {@link TopNeighbours} columns (null on {@code
 * PARTIAL} records: a split row's weights need its merged normaliser).
 *
 * <p>Memory per task: one block of at most {@code BLOCK_ENTRIES} entries plus one row (rows longer
 * than the split threshold never come whole), about {@code 4·4·(keyWidth + valueWidth)} bytes per
 * entry (buffers grown by doubling, the kernel's padded copies, its output) plus its rows' query,
 * input and output rows and the kernel's own scratch.
 */
final class RowBlockAttention implements MapPartitionsFunction<Row, Row> {

  private static final long serialVersionUID = 1L;

  /** Entries gathered before the kernel runs on a block: 64k, about 18 MiB at 8 heads × 8. */
  static final int BLOCK_ENTRIES = 1 << 16;

  static final int TAG_QUERY = 0;
  static final int TAG_ENTRY = 1;
  static final int FINAL = 0;
  static final int PARTIAL = 1;

  private final Broadcast<byte[]> model;
  private final int layer;
  private final int explain;

  RowBlockAttention(Broadcast<byte[]> model, int layer, int explain) {
    this.model = model;
    this.layer = layer;
    this.explain = explain;
  }

  @Override
  public Iterator<Row> call(Iterator<Row> input) {
    return new Blocks(ExecutorModel.steps(model.value()), layer, explain, input);
  }

  /** Reads parts from the sorted input and yields output records block by block. */
  private static final class Blocks implements Iterator<Row> {
    private final LayerSteps steps;
    private final int layer;
    private final int nextAttention;
    private final Iterator<Row> input;
    private final ScoreFunction score;
    private final HeadShape shape;
    private final int inWidth;
    private final int qw;
    private final int vw;
    private final boolean keysAreValues;
    private final int explain;
    private final List<Row> ready = new ArrayList<>();
    private int readyAt;
    private Row pending; // the next input record, read ahead

    // The block being gathered: whole rows.
    private final List<Object> ids = new ArrayList<>();
    private final List<Object> sources = new ArrayList<>(); // entries' source ids, when explaining
    private int[] rowEnds = new int[256];
    private float[] queries;
    private float[] inputs;
    private float[] keys;
    private float[] values;
    private int entries;

    Blocks(LayerSteps steps, int layer, int explain, Iterator<Row> input) {
      this.steps = steps;
      this.layer = layer;
      this.explain = explain;
      this.nextAttention = ExecutorModel.nextAttention(steps, layer + 1);
      this.input = input;
      this.score = steps.score(layer);
      this.shape = steps.shape(layer);
      this.inWidth = steps.model().layers().get(layer).inputWidth();
      this.qw = shape.keyWidth();
      this.vw = shape.valueWidth();
      this.keysAreValues = steps.project(layer, new float[inWidth], 1).keysAreValues();
      this.queries = new float[256 * qw];
      this.inputs = new float[256 * inWidth];
      this.keys = new float[1024 * qw];
      this.values = keysAreValues ? keys : new float[1024 * vw];
    }

    @Override
    public boolean hasNext() {
      while (readyAt == ready.size()) {
        ready.clear();
        readyAt = 0;
        if (!fill()) {
          return false;
        }
      }
      return true;
    }

    @Override
    public Row next() {
      if (!hasNext()) {
        throw new NoSuchElementException();
      }
      return ready.get(readyAt++);
    }

    /**
     * Reads parts until a block is full (or the input ends), then computes it; false at the end.
     */
    private boolean fill() {
      while (true) {
        Row head = pending != null ? pending : (input.hasNext() ? input.next() : null);
        pending = null;
        if (head == null) {
          if (ids.isEmpty()) {
            return false;
          }
          runBlock();
          return true;
        }
        if (head.getInt(2) != TAG_QUERY) {
          throw new IllegalStateException(
              "an entry of target " + head.get(0) + " came without its query record");
        }
        int parts = head.getInt(5);
        if (parts > 1) {
          splitPart(head);
        } else {
          wholeRow(head);
        }
        if (entries >= BLOCK_ENTRIES) {
          runBlock();
          return true;
        }
        if (!ready.isEmpty() && ids.isEmpty()) {
          return true;
        }
      }
    }

    /** Reads the entries of the part that {@code head} starts, until the next query record. */
    private Row nextEntry(Row head) {
      if (!input.hasNext()) {
        return null;
      }
      Row r = input.next();
      if (r.getInt(2) == TAG_ENTRY && Objects.equals(r.get(0), head.get(0))) {
        if (r.getInt(1) != head.getInt(1)) {
          throw new IllegalStateException("row part out of order at target " + head.get(0));
        }
        return r;
      }
      pending = r;
      return null;
    }

    private void wholeRow(Row head) {
      int row = ids.size();
      ids.add(head.get(0));
      if (row + 1 >= rowEnds.length) {
        rowEnds = Arrays.copyOf(rowEnds, rowEnds.length * 2);
        queries = Arrays.copyOf(queries, rowEnds.length * qw);
        inputs = Arrays.copyOf(inputs, rowEnds.length * inWidth);
      }
      FloatBytes.read((byte[]) head.get(3), queries, row * qw);
      FloatBytes.read((byte[]) head.get(4), inputs, row * inWidth);
      for (Row e = nextEntry(head); e != null; e = nextEntry(head)) {
        if (entries + 1 >= keys.length / qw) {
          int cap = Math.max(keys.length / qw * 2, 1024);
          keys = Arrays.copyOf(keys, cap * qw);
          values = keysAreValues ? keys : Arrays.copyOf(values, cap * vw);
        }
        byte[] kv = (byte[]) e.get(3);
        FloatBytes.read(kv, 0, qw, keys, entries * qw);
        if (!keysAreValues) {
          FloatBytes.read(kv, qw, vw, values, entries * vw);
        }
        if (explain > 0) {
          sources.add(e.get(6));
        }
        entries++;
      }
      rowEnds[row] = entries;
    }

    private void splitPart(Row head) {
      float[] query = FloatBytes.floats((byte[]) head.get(3));
      PartialSoftmax part = new PartialSoftmax(shape.heads(), shape.valueDim());
      float[] key = new float[qw];
      float[] kv = new float[qw + vw];
      for (Row e = nextEntry(head); e != null; e = nextEntry(head)) {
        FloatBytes.read((byte[]) e.get(3), kv, 0);
        System.arraycopy(kv, 0, key, 0, qw);
        int valueOff = keysAreValues ? 0 : qw;
        for (int h = 0; h < shape.heads(); h++) {
          double s = ReferenceAttention.score(score, shape, query, key, 0, 0, h);
          part.add(h, s, kv, valueOff + h * shape.valueDim());
        }
      }
      ready.add(record(head.get(0), PARTIAL, head.getInt(1), head.get(4), part.toBytes()));
    }

    /** Runs the kernel over the gathered whole rows, finishes them and queues their records. */
    private void runBlock() {
      int rows = ids.size();
      int n = Math.max(Math.max(rows, entries), 1);
      int[] offsets = new int[n + 1];
      for (int r = 0; r < n; r++) {
        offsets[r + 1] = r < rows ? rowEnds[r] : entries;
      }
      int[] columns = new int[entries];
      for (int e = 0; e < entries; e++) {
        columns[e] = e;
      }
      float[] q = Arrays.copyOf(queries, n * qw);
      float[] k = Arrays.copyOf(keys, n * qw);
      float[] v = keysAreValues ? k : Arrays.copyOf(values, n * vw);
      float[] out = new float[n * vw];
      float[] weights = explain > 0 ? new float[entries * shape.heads()] : null;
      ExecutorModel.kernel()
          .attend(CsrGraph.of(offsets, columns), score, shape, q, k, v, out, weights);
      float[] y = steps.finish(layer, Arrays.copyOf(inputs, rows * inWidth), out, rows);
      y = ExecutorModel.perNode(steps, layer + 1, nextAttention, y, rows);
      int outWidth = y.length / Math.max(rows, 1);
      for (int r = 0; r < rows; r++) {
        Object[] fields =
            fields(ids.get(r), FINAL, 0, FloatBytes.of(y, r * outWidth, outWidth), null);
        if (explain > 0) {
          TopNeighbours.Best best = new TopNeighbours.Best(explain);
          for (int e = offsets[r]; e < offsets[r + 1]; e++) {
            best.offer(sources.get(e), TopNeighbours.meanWeight(weights, e, shape.heads()));
          }
          best.writeTo(fields, 5);
        }
        ready.add(RowFactory.create(fields));
      }
      ids.clear();
      sources.clear();
      entries = 0;
    }

    /** An output record's fields: the top-neighbour columns (when explaining) left null. */
    private Object[] fields(Object id, int kind, int part, Object x, Object state) {
      Object[] f = new Object[5 + 2 * explain];
      f[0] = id;
      f[1] = kind;
      f[2] = part;
      f[3] = x;
      f[4] = state;
      return f;
    }

    private Row record(Object id, int kind, int part, Object x, Object state) {
      return RowFactory.create(fields(id, kind, part, x, state));
    }
  }
}
