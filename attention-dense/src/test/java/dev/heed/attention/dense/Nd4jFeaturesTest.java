package dev.heed.attention.dense;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertThrows;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.classify.NodeFeatures;
import java.util.Random;
import org.junit.jupiter.api.Test;
import org.nd4j.linalg.factory.Nd4j;

/** Features from ND4J arrays equal those from rows, whatever the array's strides. */
class Nd4jFeaturesTest {

  @Test
  void transposedViewGivesTheSameFeaturesAsRows() {
    long seed = 515;
    Random random = new Random(seed);
    int n = 37;
    int f = 5;
    float[][] rows = new float[n][f];
    float[][] transposedRows = new float[f][n];
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < f; j++) {
        rows[i][j] = (float) random.nextGaussian();
        transposedRows[j][i] = rows[i][j];
      }
    }
    // A transposed view exercises ND4J strides: [f, n] transposed is [n, f].
    NodeFeatures fromRows = NodeFeatures.of(rows);
    NodeFeatures fromView = Nd4jFeatures.of(Nd4j.createFromArray(transposedRows).transpose());
    assertEquals(n, fromView.nodeCount());
    assertEquals(f, fromView.featureCount());
    for (int i = 0; i < n; i++) {
      for (int j = 0; j < f; j++) {
        assertEquals(fromRows.value(i, j), fromView.value(i, j), 0f, "seed " + seed);
      }
    }
  }

  @Test
  void rejectsOtherRanksAndNonFiniteValues() {
    IllegalArgumentException rank =
        assertThrows(
            IllegalArgumentException.class,
            () -> Nd4jFeatures.of(Nd4j.createFromArray(1f, 2f, 3f)));
    assertTrue(rank.getMessage().contains("rank-2"), rank.getMessage());
    IllegalArgumentException nan =
        assertThrows(
            IllegalArgumentException.class,
            () -> Nd4jFeatures.of(Nd4j.createFromArray(new float[][] {{1f, Float.NaN}})));
    assertTrue(nan.getMessage().contains("NaN"), nan.getMessage());
  }
}
