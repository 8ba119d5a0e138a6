package dev.heed.bench.crossover;

import dev.heed.graph.AttentionPattern;
import dev.heed.graph.CompletePattern;
import dev.heed.graph.CsrGraph;
import java.util.Arrays;
import java.util.SplittableRandom;

/**
 * Seeded random attention patterns of a given density for the sweep.
 *
 * <p>A density below 1 gives a {@link CsrGraph} with exactly {@code E = max(1, round(density ·
 * n²))} entries, spread as evenly as possible over the rows (every row gets {@code ⌊E/n⌋} or {@code
 * ⌈E/n⌉} sources; which rows get one more is random), each row's sources drawn uniformly without
 * replacement, self-pairs allowed. Equal row lengths keep the two paths' work proportional to E and
 * n² rather than to an accident of the degree distribution. Density 1 gives the storage-free {@link
 * CompletePattern}.
 *
 * <p>Thread safety: stateless.
 */
public final class RandomPatterns {

  private RandomPatterns() {}

  /**
   * Returns the number of entries a pattern of {@code n} nodes and {@code density} gets.
   *
   * @param n node count, at least 1
   * @param density in {@code (0, 1]}
   * @return E, between 1 and n²
   */
  public static long entryCount(int n, double density) {
    checkArguments(n, density);
    long all = (long) n * n;
    if (density >= 1.0) {
      return all;
    }
    return Math.min(all, Math.max(1L, Math.round(density * all)));
  }

  /**
   * Returns the bytes of heap a CSR pattern of {@code E} entries needs while it is built (the
   * generator's arrays plus the graph's validated copy).
   *
   * @param n node count
   * @param entries E
   * @return bytes
   */
  public static long buildBytes(int n, long entries) {
    return 2L * Integer.BYTES * (entries + n + 1);
  }

  /**
   * Builds the pattern.
   *
   * @param n node count, at least 1
   * @param density in {@code (0, 1]}; exactly 1 gives the complete pattern
   * @param seed the random seed; the same arguments always give the same pattern
   * @return the pattern
   * @throws IllegalArgumentException if {@code n} or {@code density} is out of range, or E is more
   *     entries than one int-indexed CSR array holds
   */
  public static AttentionPattern uniform(int n, double density, long seed) {
    long entries = entryCount(n, density);
    if (density >= 1.0) {
      return CompletePattern.of(n);
    }
    if (entries > Integer.MAX_VALUE - 8) {
      throw new IllegalArgumentException(
          "n = "
              + n
              + " at density "
              + density
              + " has "
              + entries
              + " entries, more than one int-indexed CSR array holds ("
              + (Integer.MAX_VALUE - 8)
              + ")");
    }
    SplittableRandom random = new SplittableRandom(seed);
    int base = (int) (entries / n);
    int extra = (int) (entries % n);
    boolean[] longer = selectRows(n, extra, random);
    int[] offsets = new int[n + 1];
    for (int i = 0; i < n; i++) {
      offsets[i + 1] = offsets[i] + base + (longer[i] ? 1 : 0);
    }
    int[] columns = new int[(int) entries];
    int[] scratch = new int[Math.min(n, 4 * (base + 1) + 16)];
    for (int i = 0; i < n; i++) {
      int k = offsets[i + 1] - offsets[i];
      if (4L * k >= n) {
        selectionSample(n, k, random, columns, offsets[i]);
      } else {
        rejectionSample(n, k, random, columns, offsets[i], scratch);
      }
    }
    return CsrGraph.of(offsets, columns);
  }

  /**
   * Picks {@code k} of {@code n} items uniformly, in increasing order, into {@code out} from {@code
   * at} (selection sampling, Knuth, TAOCP vol. 2, §3.4.2, Algorithm S; from memory). O(n).
   */
  private static void selectionSample(int n, int k, SplittableRandom random, int[] out, int at) {
    int chosen = 0;
    for (int item = 0; item < n && chosen < k; item++) {
      // choose item with probability (still needed) / (still available)
      if (random.nextInt(n - item) < k - chosen) {
        out[at + chosen++] = item;
      }
    }
    assert chosen == k;
  }

  /**
   * Picks {@code k} distinct items of {@code n} (k much smaller than n) by drawing, sorting and
   * dropping duplicates until k remain; writes them in increasing order. Expected O(k log k).
   */
  private static void rejectionSample(
      int n, int k, SplittableRandom random, int[] out, int at, int[] scratch) {
    int have = 0;
    while (have < k) {
      int want = k - have;
      for (int d = 0; d < want; d++) {
        scratch[have + d] = random.nextInt(n);
      }
      int total = have + want;
      Arrays.sort(scratch, 0, total);
      have = 0;
      for (int j = 0; j < total; j++) {
        if (have == 0 || scratch[j] != scratch[have - 1]) {
          scratch[have++] = scratch[j];
        }
      }
    }
    System.arraycopy(scratch, 0, out, at, k);
  }

  private static boolean[] selectRows(int n, int count, SplittableRandom random) {
    boolean[] selected = new boolean[n];
    int chosen = 0;
    for (int item = 0; item < n && chosen < count; item++) {
      if (random.nextInt(n - item) < count - chosen) {
        selected[item] = true;
        chosen++;
      }
    }
    return selected;
  }

  private static void checkArguments(int n, double density) {
    if (n < 1) {
      throw new IllegalArgumentException("node count must be at least 1, got " + n);
    }
    if (!(density > 0 && density <= 1)) {
      throw new IllegalArgumentException(
          "density must be in (0, 1] (a fraction: 0.01 is 1 %), got " + density);
    }
  }
}
