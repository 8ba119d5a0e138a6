package dev.heed.live;

import static org.junit.jupiter.api.Assertions.assertEquals;

import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.SplittableRandom;
import org.junit.jupiter.api.Test;

/** The staged searches answer as a binary search one by one, over empty, short and long ranges. */
class StagedSearchTest {

  @Test
  void answersAsBinarySearchInArraysAndBaseRows() {
    SplittableRandom random = new SplittableRandom(31);
    int rows = 200;
    int nodes = 1000; // columns are node indices below 1000; rows from 200 on are empty
    int[] offsets = new int[nodes + 1];
    int[] columns = new int[rows * 300];
    int entries = 0;
    int[][] arrays = new int[rows][];
    for (int row = 0; row < rows; row++) {
      // lengths 0, 1, 2, 3 and up to 299, sorted distinct values
      int length = row < 4 ? row : random.nextInt(300);
      int[] values = random.ints(length * 3L, 0, 1000).distinct().limit(length).sorted().toArray();
      arrays[row] = values;
      offsets[row] = entries;
      System.arraycopy(values, 0, columns, entries, values.length);
      entries += values.length;
      offsets[row + 1] = entries;
    }
    Arrays.fill(offsets, rows + 1, nodes + 1, entries);
    CsrGraph base = CsrGraph.of(offsets, Arrays.copyOf(columns, entries));
    int count = 4000;
    int[][] searched = new int[count][];
    int[] rowOf = new int[count];
    int[] keys = new int[count];
    int[] low = new int[count];
    int[] length = new int[count];
    int[] baseLow = new int[count];
    int[] baseLength = new int[count];
    for (int k = 0; k < count; k++) {
      int row = random.nextInt(rows);
      rowOf[k] = row;
      int[] values = arrays[row];
      // half the keys taken from the row (first and last included), half anywhere
      keys[k] =
          values.length > 0 && random.nextBoolean()
              ? values[random.nextInt(4) == 0 ? values.length - 1 : random.nextInt(values.length)]
              : random.nextInt(-5, 1005);
      searched[k] = values;
      length[k] = values.length;
      baseLow[k] = offsets[row];
      baseLength[k] = offsets[row + 1] - offsets[row];
    }
    boolean[] inArrays = new boolean[count];
    boolean[] inBase = new boolean[count];
    StagedSearch.inArrays(searched, low, length, keys, count, inArrays);
    StagedSearch.inBaseRows(base, baseLow, baseLength, keys, count, inBase);
    for (int k = 0; k < count; k++) {
      boolean expected = Arrays.binarySearch(arrays[rowOf[k]], keys[k]) >= 0;
      assertEquals(expected, inArrays[k], "key " + keys[k] + " in row " + rowOf[k]);
      assertEquals(expected, inBase[k], "key " + keys[k] + " in base row " + rowOf[k]);
    }
  }
}
