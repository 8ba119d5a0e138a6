package dev.heed.spark;

import dev.heed.model.LayerSteps;
import java.util.Iterator;
import java.util.List;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;

/** The per-node record steps around the attention layers: features in, predictions out. */
final class NodeRowSteps {

  private NodeRowSteps() {}

  /** (id, f float columns) to (id, x), running layers {@code from..to-1} (none attends). */
  static MapPartitionsFunction<Row, Row> features(
      Broadcast<byte[]> model, int width, int from, int to) {
    return input -> {
      LayerSteps steps = ExecutorModel.steps(model.value());
      float[] x = new float[width];
      return new Iterator<Row>() {
        @Override
        public boolean hasNext() {
          return input.hasNext();
        }

        @Override
        public Row next() {
          Row r = input.next();
          for (int c = 0; c < width; c++) {
            x[c] = r.getFloat(c + 1);
          }
          float[] y = ExecutorModel.perNode(steps, from, to, x, 1);
          return RowFactory.create(r.get(0), FloatBytes.of(y, 0, y.length));
        }
      };
    };
  }

  /**
   * (id, class probabilities, 2·explain top-neighbour columns) to (id, label, probability, p_1 ..
   * p_C, the top-neighbour columns): the label with the highest probability (the first of equal
   * ones), its probability, then every class's probability.
   */
  static MapPartitionsFunction<Row, Row> predictions(List<String> labels, int explain) {
    String[] names = labels.toArray(new String[0]);
    return input ->
        new Iterator<Row>() {
          @Override
          public boolean hasNext() {
            return input.hasNext();
          }

          @Override
          public Row next() {
            Row r = input.next();
            float[] p = FloatBytes.floats((byte[]) r.get(1));
            Object[] fields = new Object[3 + names.length + 2 * explain];
            fields[0] = r.get(0);
            int best = 0;
            for (int c = 0; c < names.length; c++) {
              fields[3 + c] = p[c];
              if (p[c] > p[best]) {
                best = c;
              }
            }
            fields[1] = names[best];
            fields[2] = p[best];
            for (int c = 0; c < 2 * explain; c++) {
              fields[3 + names.length + c] = r.get(2 + c);
            }
            return RowFactory.create(fields);
          }
        };
  }
}
