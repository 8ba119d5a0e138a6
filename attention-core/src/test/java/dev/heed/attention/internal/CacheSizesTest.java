package dev.heed.attention.internal;

import static org.junit.jupiter.api.Assertions.assertEquals;
import static org.junit.jupiter.api.Assertions.assertTrue;

import dev.heed.attention.HeadShape;
import dev.heed.attention.ScoreFunction;
import dev.heed.attention.internal.CostRegime.CallSize;
import java.io.IOException;
import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

class CacheSizesTest {

  @TempDir Path dir;

  private void index(int i, String level, String type, String size) throws IOException {
    Path d = Files.createDirectories(dir.resolve("index" + i));
    Files.writeString(d.resolve("level"), level + "\n");
    Files.writeString(d.resolve("type"), type + "\n");
    Files.writeString(d.resolve("size"), size + "\n");
  }

  @Test
  void readsTheSecondLevelUnifiedCacheAsLinuxListsIt() throws IOException {
    // the layout of /sys/devices/system/cpu/cpu0/cache on Linux (kernel documentation,
    // Documentation/ABI/testing/sysfs-devices-system-cpu)
    index(0, "1", "Data", "48K");
    index(1, "1", "Instruction", "64K");
    index(2, "2", "Unified", "2048K");
    index(3, "3", "Unified", "491520K");
    assertEquals(2L << 20, CacheSizes.readL2(dir));
  }

  @Test
  void fallsBackWhenThereIsNoSecondLevelCacheOrNoFolder() throws IOException {
    assertEquals(CacheSizes.FALLBACK_L2_BYTES, CacheSizes.readL2(dir.resolve("missing")));
    index(0, "1", "Data", "32K");
    index(1, "2", "Instruction", "512K");
    index(2, "2", "Unified", "lots");
    assertEquals(CacheSizes.FALLBACK_L2_BYTES, CacheSizes.readL2(dir));
  }

  @Test
  void parsesSizes() {
    assertEquals(1L << 20, CacheSizes.parseSize("1024K"));
    assertEquals(2L << 20, CacheSizes.parseSize("2M"));
    assertEquals(512, CacheSizes.parseSize("512"));
    assertEquals(0, CacheSizes.parseSize("K"));
    assertEquals(0, CacheSizes.parseSize("-4K"));
    assertTrue(CacheSizes.l2Bytes() > 0);
  }

  @Test
  void farFractionIsTheShareOfATableBeyondTheCache() {
    HeadShape dot4x16 = new HeadShape(4, 16, 16);
    ScoreFunction dot = ScoreFunction.scaledDotProduct();
    long l2 = 2L << 20;
    // 4096 nodes × 4 heads × 32 floats × 4 bytes = 2 MiB: fits
    assertEquals(0, CostRegime.farFraction(new CallSize(4096, 40960, false, dot, dot4x16, 2), l2));
    // 16384 nodes: an 8 MiB table, three quarters of it beyond the cache
    assertEquals(
        0.75,
        CostRegime.farFraction(new CallSize(16384, 163840, false, dot, dot4x16, 2), l2),
        1e-12);
    // the complete pattern reads its sources in cached tiles
    assertEquals(
        0, CostRegime.farFraction(new CallSize(16384, 16384L * 16384, true, dot, dot4x16, 2), l2));
  }
}
