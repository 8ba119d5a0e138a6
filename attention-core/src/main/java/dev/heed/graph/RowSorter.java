package dev.heed.graph;

/**
 * Sorts the entries of one CSR row in place without a comparison sort of the whole edge set: rows
 * of at most {@link CsrAssembler#INSERTION_SORT_LIMIT} entries by insertion (bounded work per
 * entry), longer rows by LSD radix sort on 8-bit digits through a scratch buffer of the longest
 * row's length. Already sorted rows cost one linear check. Not thread safe; one per build.
 */
final class RowSorter {

  private static final int RADIX_BITS = 8;
  private static final int RADIX = 1 << RADIX_BITS;

  private final int[] scratch;
  private final int[] buckets = new int[RADIX + 1];
  private final int digitPasses;

  /**
   * @param maxRowLength the longest row that will be sorted
   * @param keyBits how many low bits the keys use (keys are in {@code 0..2^keyBits - 1})
   */
  RowSorter(int maxRowLength, int keyBits) {
    this.scratch = maxRowLength > CsrAssembler.INSERTION_SORT_LIMIT ? new int[maxRowLength] : null;
    this.digitPasses = Math.max(1, (keyBits + RADIX_BITS - 1) / RADIX_BITS);
  }

  void sort(int[] a, int from, int to) {
    int length = to - from;
    if (length < 2 || isSorted(a, from, to)) {
      return;
    }
    if (length <= CsrAssembler.INSERTION_SORT_LIMIT) {
      insertionSort(a, from, to);
    } else {
      radixSort(a, from, length);
    }
  }

  private static boolean isSorted(int[] a, int from, int to) {
    for (int i = from + 1; i < to; i++) {
      if (a[i - 1] > a[i]) {
        return false;
      }
    }
    return true;
  }

  private static void insertionSort(int[] a, int from, int to) {
    for (int i = from + 1; i < to; i++) {
      int v = a[i];
      int j = i - 1;
      while (j >= from && a[j] > v) {
        a[j + 1] = a[j];
        j--;
      }
      a[j + 1] = v;
    }
  }

  /** LSD radix sort of {@code a[from .. from+length)}; keys are non-negative. */
  private void radixSort(int[] a, int from, int length) {
    int[] src = a;
    int srcOff = from;
    int[] dst = scratch;
    int dstOff = 0;
    for (int pass = 0; pass < digitPasses; pass++) {
      int shift = pass * RADIX_BITS;
      java.util.Arrays.fill(buckets, 0);
      for (int i = 0; i < length; i++) {
        buckets[((src[srcOff + i] >>> shift) & (RADIX - 1)) + 1]++;
      }
      for (int b = 0; b < RADIX; b++) {
        buckets[b + 1] += buckets[b];
      }
      for (int i = 0; i < length; i++) {
        int v = src[srcOff + i];
        dst[dstOff + buckets[(v >>> shift) & (RADIX - 1)]++] = v;
      }
      int[] t = src;
      src = dst;
      dst = t;
      int o = srcOff;
      srcOff = dstOff;
      dstOff = o;
    }
    if (src != a) {
      System.arraycopy(src, srcOff, a, from, length);
    }
  }
}
