package dev.heed.spark;

import dev.heed.model.LayerSteps;
import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.NoSuchElementException;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;

/**
 * The per-node step before an attention layer, over (id, x) records in blocks of {@link #ROWS}:
 * runs the per-node layers from {@code first} up to the attention layer, then projects. Yields (id,
 * x, query row, key-and-value row): the key row then the value row, or the value row alone when
 * they are one (GATv2).
 */
final class ProjectStep implements MapPartitionsFunction<Row, Row> {

  private static final long serialVersionUID = 1L;

  /** Rows projected per call. */
  static final int ROWS = 4096;

  private final Broadcast<byte[]> model;
  private final int first;
  private final int layer;

  ProjectStep(Broadcast<byte[]> model, int first, int layer) {
    this.model = model;
    this.first = first;
    this.layer = layer;
  }

  @Override
  public Iterator<Row> call(Iterator<Row> input) {
    LayerSteps steps = ExecutorModel.steps(model.value());
    int in = steps.model().layers().get(first).inputWidth();
    int width = steps.model().layers().get(layer).inputWidth();
    return new Iterator<>() {
      private final List<Row> ready = new ArrayList<>();
      private int at;

      @Override
      public boolean hasNext() {
        if (at < ready.size()) {
          return true;
        }
        ready.clear();
        at = 0;
        List<Object> ids = new ArrayList<>();
        float[] x = new float[ROWS * in];
        while (ids.size() < ROWS && input.hasNext()) {
          Row r = input.next();
          FloatBytes.read((byte[]) r.get(1), x, ids.size() * in);
          ids.add(r.get(0));
        }
        int rows = ids.size();
        if (rows == 0) {
          return false;
        }
        float[] h = ExecutorModel.perNode(steps, first, layer, x, rows);
        LayerSteps.Projections p = steps.project(layer, h, rows);
        int qw = steps.shape(layer).keyWidth();
        int vw = steps.shape(layer).valueWidth();
        for (int r = 0; r < rows; r++) {
          byte[] kv;
          if (p.keysAreValues()) {
            kv = FloatBytes.of(p.values(), r * vw, vw);
          } else {
            float[] both = new float[qw + vw];
            System.arraycopy(p.keys(), r * qw, both, 0, qw);
            System.arraycopy(p.values(), r * vw, both, qw, vw);
            kv = FloatBytes.of(both, 0, qw + vw);
          }
          ready.add(
              RowFactory.create(
                  ids.get(r),
                  FloatBytes.of(h, r * width, width),
                  FloatBytes.of(p.queries(), r * qw, qw),
                  kv));
        }
        return true;
      }

      @Override
      public Row next() {
        if (!hasNext()) {
          throw new NoSuchElementException();
        }
        return ready.get(at++);
      }
    };
  }
}
