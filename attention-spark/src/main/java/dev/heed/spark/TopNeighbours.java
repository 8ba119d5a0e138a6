package dev.heed.spark;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ReferenceAttention;
import dev.heed.attention.ScoreFunction;
import dev.heed.model.LayerSteps;
import java.io.Serializable;
import java.util.ArrayList;
import java.util.Comparator;
import java.util.HashMap;
import java.util.List;
import java.util.Map;
import java.util.PriorityQueue;
import org.apache.spark.api.java.function.MapPartitionsFunction;
import org.apache.spark.broadcast.Broadcast;
import org.apache.spark.sql.Row;
import org.apache.spark.sql.RowFactory;
import org.apache.spark.sql.types.DataType;
import org.apache.spark.sql.types.DataTypes;
import org.apache.spark.sql.types.StructType;

/**
 * The k sources a target attended to most in the last attention layer, by the attention weight
 * averaged over heads (as {@link dev.heed.classify.LayerExplanation#topNeighbours()}: the float64
 * mean of the heads' α, rounded to float; largest first, ties by smaller id). In Spark rows they
 * are 2·k nullable columns {@code neighbour_1, weight_1, ..., neighbour_k, weight_k} (the id type,
 * float), null past the row's entry count, the same columns as {@code heed classify --explain K}.
 *
 * <p>Whole rows take the kernel's weights. A split row's weights need its merged softmax
 * normaliser, so they are computed after the merge: each split row's entries meet their target's
 * query row and merged {@link PartialSoftmax} state, each task keeps its k best per target ({@link
 * #candidates}), and the few candidates per target are reduced to its k best ({@link #best}).
 */
final class TopNeighbours {

  private TopNeighbours() {}

  /** Adds the 2·k columns to {@code schema}. */
  static StructType addColumns(StructType schema, DataType idType, int k) {
    StructType s = schema;
    for (int i = 1; i <= k; i++) {
      s = s.add("neighbour_" + i, idType, true).add("weight_" + i, DataTypes.FloatType, true);
    }
    return s;
  }

  /** The column names, in order. */
  static List<String> columnNames(int k) {
    List<String> names = new ArrayList<>(2 * k);
    for (int i = 1; i <= k; i++) {
      names.add("neighbour_" + i);
      names.add("weight_" + i);
    }
    return names;
  }

  /** The mean over heads of entry {@code e}'s weights ({@code e·heads + h}), as on one machine. */
  static float meanWeight(float[] weights, int e, int heads) {
    double sum = 0;
    for (int h = 0; h < heads; h++) {
      sum += weights[e * heads + h];
    }
    return (float) (sum / heads);
  }

  /** Orders ids by their natural order (numbers by value, text by {@link String#compareTo}). */
  @SuppressWarnings({"unchecked", "rawtypes"})
  static int compareIds(Object a, Object b) {
    return ((Comparable) a).compareTo(b);
  }

  /** A source and its weight. */
  record Candidate(Object id, float weight) implements Serializable {}

  /** Largest weight first, then the smaller id. */
  static final Comparator<Candidate> BEST_FIRST =
      (a, b) -> {
        int c = Float.compare(b.weight(), a.weight());
        return c != 0 ? c : compareIds(a.id(), b.id());
      };

  /** The k best candidates offered, in a bounded heap: O(m log k) for m offers. */
  static final class Best {
    private final int k;
    private final PriorityQueue<Candidate> heap;

    Best(int k) {
      this.k = k;
      this.heap = new PriorityQueue<>(k + 1, BEST_FIRST.reversed());
    }

    void offer(Object id, float weight) {
      if (heap.size() == k) {
        Candidate worst = heap.peek();
        int c = Float.compare(weight, worst.weight());
        if (c < 0 || (c == 0 && compareIds(id, worst.id()) >= 0)) {
          return;
        }
      }
      heap.add(new Candidate(id, weight));
      if (heap.size() > k) {
        heap.poll();
      }
    }

    /** The kept candidates, best first. */
    List<Candidate> sorted() {
      List<Candidate> out = new ArrayList<>(heap);
      out.sort(BEST_FIRST);
      return out;
    }

    /** Writes the 2·k column values at {@code fields[off..]}: nulls past the kept count. */
    void writeTo(Object[] fields, int off) {
      List<Candidate> top = sorted();
      for (int i = 0; i < k; i++) {
        fields[off + 2 * i] = i < top.size() ? top.get(i).id() : null;
        fields[off + 2 * i + 1] = i < top.size() ? top.get(i).weight() : null;
      }
    }
  }

  /**
   * Over a split row's entries joined with their target's query and merged state, (dst, src, kv, q,
   * state) in any order: each task's k best sources per target, as (dst, src, weight). Memory: k
   * candidates per split target met.
   */
  static MapPartitionsFunction<Row, Row> candidates(Broadcast<byte[]> model, int layer, int k) {
    return input -> {
      LayerSteps steps = ExecutorModel.steps(model.value());
      ScoreFunction score = steps.score(layer);
      HeadShape shape = steps.shape(layer);
      int qw = shape.keyWidth();
      Map<Object, Best> best = new HashMap<>();
      Map<Object, PartialSoftmax> states = new HashMap<>();
      Map<Object, float[]> queries = new HashMap<>();
      float[] key = new float[qw];
      while (input.hasNext()) {
        Row r = input.next();
        Object dst = r.get(0);
        float[] query = queries.computeIfAbsent(dst, d -> FloatBytes.floats((byte[]) r.get(3)));
        PartialSoftmax state =
            states.computeIfAbsent(
                dst,
                d -> PartialSoftmax.fromBytes(shape.heads(), shape.valueDim(), (byte[]) r.get(4)));
        FloatBytes.read((byte[]) r.get(2), 0, qw, key, 0);
        double sum = 0;
        for (int h = 0; h < shape.heads(); h++) {
          double s = ReferenceAttention.score(score, shape, query, key, 0, 0, h);
          sum += (float) state.weight(h, s); // α rounded to float, as the kernel's
        }
        best.computeIfAbsent(dst, d -> new Best(k)).offer(r.get(1), (float) (sum / shape.heads()));
      }
      List<Row> out = new ArrayList<>();
      for (Map.Entry<Object, Best> e : best.entrySet()) {
        for (Candidate c : e.getValue().sorted()) {
          out.add(RowFactory.create(e.getKey(), c.id(), c.weight()));
        }
      }
      return out.iterator();
    };
  }

  /**
   * Over (dst, src, weight) candidates grouped by target (sorted by dst): each target's k best, as
   * (dst, neighbour_1, weight_1, ...).
   */
  static MapPartitionsFunction<Row, Row> best(int k) {
    return input ->
        KeyRuns.map(
            input,
            (dst, candidates) -> {
              Best best = new Best(k);
              for (Row c : candidates) {
                best.offer(c.get(1), c.getFloat(2));
              }
              Object[] fields = new Object[1 + 2 * k];
              fields[0] = dst;
              best.writeTo(fields, 1);
              return RowFactory.create(fields);
            });
  }
}
