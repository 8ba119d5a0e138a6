package dev.heed.graph;

import static org.junit.jupiter.api.Assertions.assertArrayEquals;
import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;

import dev.heed.classify.NodeFeatures;
import java.util.Arrays;
import org.junit.jupiter.api.Test;

/** Row access through the read interfaces gives the same rows as the CSR arrays. */
class NeighbourRowsTest {

  @Test
  void copyRowMatchesTheCsrArrays() {
    CsrGraph graph = CsrGraph.of(new int[] {0, 2, 2, 5}, new int[] {0, 2, 0, 1, 2});
    NeighbourRows rows = graph;
    int[] into = new int[8];
    Arrays.fill(into, -7);
    assertEquals(3, rows.copyRow(2, into, 4));
    assertArrayEquals(new int[] {-7, -7, -7, -7, 0, 1, 2, -7}, into);
    assertEquals(0, rows.copyRow(1, into, 8));
    assertEquals(2, rows.degree(0));
    assertThrows(IndexOutOfBoundsException.class, () -> rows.copyRow(3, into, 0));
    assertThrows(IndexOutOfBoundsException.class, () -> rows.copyRow(2, into, 6));
  }

  @Test
  void featureRowsCopyOneNode() {
    NodeFeatures features = NodeFeatures.of(new float[][] {{1f, 2f}, {3f, -4f}});
    float[] into = new float[5];
    features.copyRow(1, into, 2);
    assertArrayEquals(new float[] {0f, 0f, 3f, -4f, 0f}, into);
    assertThrows(IndexOutOfBoundsException.class, () -> features.copyRow(2, into, 0));
    assertThrows(IndexOutOfBoundsException.class, () -> features.copyRow(0, into, 4));
  }
}
