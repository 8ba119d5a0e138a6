package dev.heed.spark;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;

import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The bounded best-k selection behind the neighbour columns, without Spark. */
class TopNeighboursTest {

  @Test
  void keepsTheLargestWeightsBestFirstWithTiesToTheSmallerId() {
    TopNeighbours.Best best = new TopNeighbours.Best(3);
    best.offer(9L, 0.25f);
    best.offer(4L, 0.5f);
    best.offer(7L, 0.25f);
    best.offer(2L, 0.125f);
    best.offer(5L, 0.25f);
    Object[] fields = new Object[7];
    best.writeTo(fields, 1);
    assertArrayEquals(new Object[] {null, 4L, 0.5f, 5L, 0.25f, 7L, 0.25f}, fields);
  }

  @Test
  void fewerCandidatesThanKLeaveNulls() {
    TopNeighbours.Best best = new TopNeighbours.Best(3);
    best.offer("b", 0.75f);
    Object[] fields = new Object[6];
    best.writeTo(fields, 0);
    assertArrayEquals(new Object[] {"b", 0.75f, null, null, null, null}, fields);
  }

  @Test
  void anyOfferOrderGivesTheSortedTopK() {
    SplittableRandom r = new SplittableRandom(3);
    long[] ids = new long[200];
    float[] w = new float[200];
    for (int i = 0; i < ids.length; i++) {
      ids[i] = i;
      w[i] = r.nextInt(50) / 64f; // many ties
    }
    Object[] first = null;
    for (int round = 0; round < 5; round++) {
      TopNeighbours.Best best = new TopNeighbours.Best(10);
      for (int i = 0; i < ids.length; i++) {
        int j = i + r.nextInt(ids.length - i);
        long id = ids[j];
        ids[j] = ids[i];
        ids[i] = id;
        float x = w[j];
        w[j] = w[i];
        w[i] = x;
        best.offer(ids[i], w[i]);
      }
      Object[] fields = new Object[20];
      best.writeTo(fields, 0);
      if (first == null) {
        first = fields;
        for (int i = 1; i < 10; i++) {
          float a = (Float) fields[2 * i - 1];
          float b = (Float) fields[2 * i + 1];
          boolean ordered = a > b || (a == b && (Long) fields[2 * i - 2] < (Long) fields[2 * i]);
          assertEquals(true, ordered, "rank " + i);
        }
      }
      assertArrayEquals(first, fields, "round " + round);
    }
  }
}
