package dev.heed.spark;

import dev.heed.attention.HeadShape;
import dev.heed.model.LayerSteps;
import java.util.Iterator;
import java.util.NoSuchElementException;
import java.util.Objects;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;

/**
 * Merges the parts of split rows, sorted by (target, part): their {@link PartialSoftmax} states
 * combine exactly, the result is the row's attention output, and the row is finished as a whole row
 * is in {@link RowBlockAttention}. Yields (id, next input). Memory: one row's state, heads × (2 +
 * valueDim) doubles, however many parts the row has.
 */
final class SplitRowMerge implements MapPartitionsFunction<Row, Row> {

  private static final long serialVersionUID = 1L;

  private final Broadcast<byte[]> model;
  private final int layer;

  SplitRowMerge(Broadcast<byte[]> model, int layer) {
    this.model = model;
    this.layer = layer;
  }

  @Override
  public Iterator<Row> call(Iterator<Row> input) {
    LayerSteps steps = ExecutorModel.steps(model.value());
    HeadShape shape = steps.shape(layer);
    int next = ExecutorModel.nextAttention(steps, layer + 1);
    return new Iterator<>() {
      private Row pending = input.hasNext() ? input.next() : null;

      @Override
      public boolean hasNext() {
        return pending != null;
      }

      @Override
      public Row next() {
        if (pending == null) {
          throw new NoSuchElementException();
        }
        Object id = pending.get(0);
        PartialSoftmax row = new PartialSoftmax(shape.heads(), shape.valueDim());
        byte[] x = null;
        int parts = 0;
        while (pending != null && Objects.equals(pending.get(0), id)) {
          row.merge(
              PartialSoftmax.fromBytes(shape.heads(), shape.valueDim(), (byte[]) pending.get(4)));
          if (pending.get(3) != null) {
            x = (byte[]) pending.get(3);
          }
          parts++;
          pending = input.hasNext() ? input.next() : null;
        }
        if (x == null) {
          throw new IllegalStateException(
              "split row of target " + id + " lost its input row (" + parts + " parts)");
        }
        float[] attended = new float[shape.valueWidth()];
        row.result(attended, 0);
        float[] y = steps.finish(layer, FloatBytes.floats(x), attended, 1);
        y = ExecutorModel.perNode(steps, layer + 1, next, y, 1);
        return RowFactory.create(id, FloatBytes.of(y, 0, y.length));
      }
    };
  }
}
