package dev.heed.sparse.internal;

import static org.junit.jupiter.api.Assertions.assertNotNull;
import static org.junit.jupiter.api.Assertions.assertNull;
import static org.junit.jupiter.api.Assertions.assertTrue;

import java.nio.file.Files;
import java.nio.file.Path;
import org.junit.jupiter.api.Test;
import org.junit.jupiter.api.io.TempDir;

/**
 * The huge-page advice read from the two Linux files. Their forms follow the Linux kernel's
 * documentation of the proc file system ({@code smaps_rollup}: one {@code Name: value kB} line per
 * field) and of transparent huge pages ({@code enabled}: the modes with the active one in
 * brackets); the samples below are written from memory of that documentation.
 */
class HugePageAdviceTest {

  private static final String MADVISE = "always [madvise] never\n";

  private static String rollup(long anonHugeKb) {
    return "55d0c0000000-7ffd00000000 ---p 00000000 00:00 0                          [rollup]\n"
        + "Rss:             5123456 kB\n"
        + "Anonymous:       5000000 kB\n"
        + "AnonHugePages:   "
        + anonHugeKb
        + " kB\n"
        + "Swap:                  0 kB\n";
  }

  @Test
  void aProcessWithoutHugePagesIsToldTheJvmFlag() {
    String advice = HugePageAdvice.advice(rollup(0), MADVISE, 1_048_576);
    assertNotNull(advice);
    assertTrue(advice.contains("-XX:+UseTransparentHugePages"), advice);
    assertTrue(advice.contains("1048576 nodes"), advice);
    assertTrue(advice.contains("long-running"), advice);
  }

  @Test
  void aProcessWithHugePagesGetsNoAdvice() {
    assertNull(HugePageAdvice.advice(rollup(2048), MADVISE, 1_048_576));
    assertNull(HugePageAdvice.advice(rollup(4_194_304), "[always] madvise never\n", 10));
  }

  @Test
  void aHeapOnExplicitHugePagesGetsNoAdvice() {
    String rollup = rollup(0) + "Shared_Hugetlb:        0 kB\nPrivate_Hugetlb:  4194304 kB\n";
    assertNull(HugePageAdvice.advice(rollup, MADVISE, 1_048_576));
    String none = rollup(0) + "Shared_Hugetlb:        0 kB\nPrivate_Hugetlb:        0 kB\n";
    assertNotNull(HugePageAdvice.advice(none, MADVISE, 1_048_576));
  }

  @Test
  void aKernelWithHugePagesOffIsNamed() {
    String advice = HugePageAdvice.advice(rollup(0), "always madvise [never]\n", 300_000);
    assertNotNull(advice);
    assertTrue(advice.contains("transparent_hugepage/enabled is never"), advice);
  }

  @Test
  void missingOrUnexpectedEvidenceGivesNoAdvice(@TempDir Path dir) throws Exception {
    assertNull(HugePageAdvice.advice(null, MADVISE, 1));
    assertNull(HugePageAdvice.advice(rollup(0), null, 1));
    assertNull(HugePageAdvice.advice("Rss: 12 kB\n", MADVISE, 1));
    assertNull(HugePageAdvice.advice(rollup(0), "always madvise never\n", 1));
    assertNull(HugePageAdvice.read(dir.resolve("absent")));
    Path present = Files.writeString(dir.resolve("enabled"), MADVISE);
    assertTrue(MADVISE.equals(HugePageAdvice.read(present)));
  }
}
