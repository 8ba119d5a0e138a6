package dev.heed.spark;

import java.util.ArrayList;
import java.util.Iterator;
import java.util.List;
import java.util.NoSuchElementException;
import java.util.Objects;
import java.util.function.BiFunction;
import org.apache.spark.sql.Row;

/**
 * Records sorted (or clustered) by their first column, read as runs of equal keys: one output
 * record per run. Memory: one run's records.
 */
final class KeyRuns {

  private KeyRuns() {}

  /** Applies {@code f} to each run (its key and its records, in input order). */
  static Iterator<Row> map(Iterator<Row> input, BiFunction<Object, List<Row>, Row> f) {
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
        Object key = pending.get(0);
        List<Row> run = new ArrayList<>();
        while (pending != null && Objects.equals(pending.get(0), key)) {
          run.add(pending);
          pending = input.hasNext() ? input.next() : null;
        }
        return f.apply(key, run);
      }
    };
  }
}
