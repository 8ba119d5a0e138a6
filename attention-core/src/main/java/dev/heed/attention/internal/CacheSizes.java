package dev.heed.attention.internal;

import java.io.IOException;
import java.nio.charset.StandardCharsets;
import java.nio.file.Files;
import java.nio.file.Path;
import java.util.Locale;
import org.slf4j.Logger;
import org.slf4j.LoggerFactory;

/**
 * The size of one core's second-level cache, which the path cost model needs to tell node tables
 * that stay in that cache from ones that do not. Read once per JVM from Linux's {@code
 * /sys/devices/system/cpu/cpu0/cache}; elsewhere, or if that cannot be read, {@value
 * #FALLBACK_L2_BYTES} bytes (1 MiB, common practice for server cores of recent years; a value from
 * memory, not measured). Internal, not API.
 *
 * <p>Thread safety: immutable after class initialisation.
 */
public final class CacheSizes {

  /** The second-level cache size assumed where it cannot be read. */
  public static final long FALLBACK_L2_BYTES = 1L << 20;

  private static final Logger LOG = LoggerFactory.getLogger(CacheSizes.class);

  private static final long L2 = readL2(Path.of("/sys/devices/system/cpu/cpu0/cache"));

  private CacheSizes() {}

  /**
   * Returns one core's second-level cache size.
   *
   * @return bytes, at least 1
   */
  public static long l2Bytes() {
    return L2;
  }

  /**
   * Reads the second-level data or unified cache's size from a Linux cache folder ({@code
   * indexN/level}, {@code type}, {@code size} such as {@code 2048K}).
   *
   * @param dir the folder
   * @return bytes, or {@link #FALLBACK_L2_BYTES} if none can be read
   */
  static long readL2(Path dir) {
    try (var entries = Files.list(dir)) {
      for (Path index : (Iterable<Path>) entries.sorted()::iterator) {
        if (!index.getFileName().toString().startsWith("index")
            || !read(index.resolve("level")).equals("2")
            || read(index.resolve("type")).equalsIgnoreCase("Instruction")) {
          continue;
        }
        long bytes = parseSize(read(index.resolve("size")));
        if (bytes > 0) {
          return bytes;
        }
      }
    } catch (IOException | RuntimeException e) {
      LOG.debug("no second-level cache size in {}: {}", dir, e.toString());
    }
    return FALLBACK_L2_BYTES;
  }

  /** Parses {@code 2048K}, {@code 2M} or a plain byte count; 0 if it is none of these. */
  static long parseSize(String text) {
    String t = text.trim().toUpperCase(Locale.ROOT);
    long unit = 1;
    if (t.endsWith("K")) {
      unit = 1L << 10;
    } else if (t.endsWith("M")) {
      unit = 1L << 20;
    }
    String digits = unit == 1 ? t : t.substring(0, t.length() - 1);
    if (digits.isEmpty() || !digits.chars().allMatch(Character::isDigit) || digits.length() > 12) {
      return 0;
    }
    return Long.parseLong(digits) * unit;
  }

  private static String read(Path file) throws IOException {
    return Files.readString(file, StandardCharsets.US_ASCII).trim();
  }
}
