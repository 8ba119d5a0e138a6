package dev.heed.spark;

import dev.heed.attention.HeadShape;
import dev.heed.model.LayerSteps;
import java.util.Iterator;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;

/**
 * Merges the parts of split rows, sorted by (target, part): their {@link PartialSoftmax} states
 * combine exactly, the result is the row's attention output, and the row is finished as a whole row
 * is in {@link RowBlockAttention}. Yields (id, next input), and with {@code keepState} also the
 * merged state (whose normalisers give the row's attention weights, {@link TopNeighbours}). Memory:
 * one row's part states, heads × (2 + valueDim) doubles each (a row has ceil(entries / cap) parts).
 */
final class SplitRowMerge implements MapPartitionsFunction<Row, Row> {

  private static final long serialVersionUID = 1L;

  private final Broadcast<byte[]> model;
  private final int layer;
  private final boolean keepState;

  SplitRowMerge(Broadcast<byte[]> model, int layer, boolean keepState) {
    this.model = model;
    this.layer = layer;
    this.keepState = keepState;
  }

  @Override
  public Iterator<Row> call(Iterator<Row> input) {
    LayerSteps steps = ExecutorModel.steps(model.value());
    HeadShape shape = steps.shape(layer);
    int next = ExecutorModel.nextAttention(steps, layer + 1);
    return KeyRuns.map(
        input,
        (id, parts) -> {
          PartialSoftmax row = new PartialSoftmax(shape.heads(), shape.valueDim());
          byte[] x = null;
          for (Row part : parts) {
            row.merge(
                PartialSoftmax.fromBytes(shape.heads(), shape.valueDim(), (byte[]) part.get(4)));
            if (part.get(3) != null) {
              x = (byte[]) part.get(3);
            }
          }
          if (x == null) {
            throw new IllegalStateException(
                "split row of target " + id + " lost its input row (" + parts.size() + " parts)");
          }
          float[] attended = new float[shape.valueWidth()];
          row.result(attended, 0);
          float[] y = steps.finish(layer, FloatBytes.floats(x), attended, 1);
          y = ExecutorModel.perNode(steps, layer + 1, next, y, 1);
          byte[] out = FloatBytes.of(y, 0, y.length);
          return keepState ? RowFactory.create(id, out, row.toBytes()) : RowFactory.create(id, out);
        });
  }
}
