package dev.heed.bench.crossover;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertNull;

import dev.heed.attention.ComputePath;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.List;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/** Reading a sweep's CSV back for fitting; no timing. */
class SweepFitTest {

  @TempDir Path dir;

  @Test
  void readsMeasuredAndSkippedPoints() throws IOException {
    Path csv =
        Files.writeString(
            dir.resolve("crossover.csv"),
            String.join(",", CrossoverReport.CSV_COLUMNS)
                + "\r\n"
                + "dot-product,256,0.1,6554,dense,1.5,1.4,1.6,1.45,1.55,0.13,1.4,1.6,0,0,3,9,1,2,GFLOP/s,0.1,\"\"\r\n"
                + "additive,1024,1,1048576,sparse,,,,,,,,,,,,,,,Mrows/s,,\"skipped: a, b\"\r\n");
    List<SweepPoint> points = SweepFit.readPoints(csv);
    assertEquals(2, points.size());
    SweepPoint dense = points.get(0);
    assertEquals(SweepScore.DOT_PRODUCT, dense.score());
    assertEquals(256, dense.n());
    assertEquals(6554, dense.edges());
    assertEquals(ComputePath.DENSE, dense.path());
    assertEquals(1.5, dense.timing().medianMillis(), 1e-12);
    assertEquals(1.5e-3, SweepFit.measurement(SweepConfig.fullSweep(), dense).seconds(), 1e-15);
    SweepPoint skipped = points.get(1);
    assertEquals(SweepScore.ADDITIVE, skipped.score());
    assertNull(skipped.timing());
  }
}
