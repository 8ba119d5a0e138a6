package dev.heed.spark;

import java.util.List;
import org.apache.spark.sql.Dataset;
import org.apache.spark.sql.Row;

/**
 * The result of {@link SparkNodeClassifier#classify}: the predictions frame, lazily computed from
 * the last layer's persisted rows, and what the run did. Close it after the predictions have been
 * written or collected, to release the persisted rows.
 *
 * <p>Thread safety: not thread-safe; use from the thread that classified.
 */
public final class SparkScores implements AutoCloseable {

  private final Dataset<Row> predictions;
  private final List<Dataset<?>> held;
  private final long splitRows;
  private final long entries;

  SparkScores(Dataset<Row> predictions, List<Dataset<?>> held, long splitRows, long entries) {
    this.predictions = predictions;
    this.held = held;
    this.splitRows = splitRows;
    this.entries = entries;
  }

  /**
   * Returns the predictions: the id column (the features frame's name and type), {@code label}
   * (string: the class with the highest probability, the first of equal ones), {@code probability}
   * (float) and one float column {@code p_<label>} per class label, in the model's label order.
   *
   * @return the frame; valid until {@link #close()}
   */
  public Dataset<Row> predictions() {
    return predictions;
  }

  /**
   * Returns how many rows of the graph were longer than the split threshold and ran in parts.
   *
   * @return the number of split rows
   */
  public long splitRows() {
    return splitRows;
  }

  /**
   * Returns the number of attention entries of the graph built by the conventions (edges plus
   * self-loops, after direction and duplicates).
   *
   * @return the entry count E
   */
  public long entries() {
    return entries;
  }

  /** Releases the persisted rows; the predictions frame must not be used after. */
  @Override
  public void close() {
    for (Dataset<?> d : held) {
      d.unpersist(false);
    }
    held.clear();
  }
}
