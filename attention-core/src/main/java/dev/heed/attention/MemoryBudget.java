package dev.heed.attention;

import java.util.Locale;

/**
 * The check that every heap allocation whose size the input drives passes before it is made: graph
 * building (rows, columns, id maps), feature matrices and tensors read from files, a forward pass's
 * per-layer arrays, receptive fields, and the sparse kernel's packed node table. A request that
 * does not fit fails with a {@link MemoryBudgetExceededException} that states the bytes needed, the
 * limit, and how to raise it, instead of an {@link OutOfMemoryError} that could strike any thread.
 *
 * <p>The limit is the heap's free room ({@code -Xmx} less what is in use), and at most the value of
 * the system property {@value #MAX_BYTES_PROPERTY} (bytes; optional, read at each check; suffixes
 * {@code k}, {@code m}, {@code g} allowed) for a service that wants to keep a share of its heap for
 * other work. Before refusing, the check asks the JVM for one collection and measures again (only
 * on the path that would refuse; with {@code -XX:+DisableExplicitGC} the first measurement stands),
 * so garbage does not count against a request. The dense kernel's off-heap scratch has its own
 * budget, {@link KernelOptions#denseMemoryBudgetBytes()}.
 *
 * <p>A check is an estimate taken before the allocation, not a reservation: two threads may pass it
 * together and then not both fit. Allocations of one large array also catch {@link
 * OutOfMemoryError} and report it the same way.
 *
 * <p>Thread safety: stateless; callable from any thread.
 */
public final class MemoryBudget {

  /** System property capping one input-driven allocation, in bytes (for example {@code 2g}). */
  public static final String MAX_BYTES_PROPERTY = "heed.memory.maxBytes";

  private MemoryBudget() {}

  /**
   * Returns the bytes an input-driven allocation may take now: the heap's free room, capped by
   * {@value #MAX_BYTES_PROPERTY} when set.
   *
   * @return the limit in bytes
   * @throws IllegalArgumentException if the property is set but not a size
   */
  public static long limitBytes() {
    return Math.min(configuredBytes(), heapRoom());
  }

  /**
   * Checks that {@code bytes} fit the budget.
   *
   * @param what what is allocated, for the message (for example {@code "graph columns of edges.csv:
   *     30,000,000 entries"})
   * @param bytes the bytes it needs, at least 0
   * @throws MemoryBudgetExceededException if it does not fit; the message states {@code what}, the
   *     bytes, the limit and how to raise it
   */
  public static void check(String what, long bytes) {
    if (!fits(bytes)) {
      throw exceeded(what, bytes);
    }
  }

  /**
   * Returns whether {@code bytes} fit the budget (for callers that can do without the allocation,
   * such as an optional cache).
   *
   * @param bytes the bytes needed
   * @return true if they fit
   */
  public static boolean fits(long bytes) {
    long configured = configuredBytes();
    if (bytes > configured) {
      return false;
    }
    if (bytes <= heapRoom()) {
      return true;
    }
    System.gc(); // only on the path that would refuse: garbage must not count against a request
    return bytes <= heapRoom();
  }

  /**
   * Returns the exception for an allocation that did not fit (after {@link #fits} said no, or an
   * {@link OutOfMemoryError} from one large array).
   *
   * @param what what was allocated
   * @param bytes the bytes it needed
   * @return the exception, with the limit and remedy in its message
   */
  public static MemoryBudgetExceededException exceeded(String what, long bytes) {
    long configured = configuredBytes();
    long room = heapRoom();
    long limit = Math.min(configured, room);
    String which =
        configured <= room
            ? "the cap -D" + MAX_BYTES_PROPERTY + "=" + configured
            : "the heap's free room (-Xmx " + mib(Runtime.getRuntime().maxMemory()) + ")";
    return new MemoryBudgetExceededException(
        what
            + " needs "
            + bytes
            + " bytes ("
            + mib(bytes)
            + "), more than the "
            + limit
            + " bytes ("
            + mib(limit)
            + ") allowed now by "
            + which
            + "; raise -Xmx"
            + (configured != Long.MAX_VALUE ? " or -D" + MAX_BYTES_PROPERTY : "")
            + ", or give a smaller input",
        bytes,
        limit);
  }

  private static long heapRoom() {
    Runtime rt = Runtime.getRuntime();
    long used = rt.totalMemory() - rt.freeMemory();
    return Math.max(0, rt.maxMemory() - used);
  }

  private static long configuredBytes() {
    String value = System.getProperty(MAX_BYTES_PROPERTY);
    if (value == null || value.isBlank()) {
      return Long.MAX_VALUE;
    }
    String v = value.trim().toLowerCase(Locale.ROOT);
    long unit = 1;
    char last = v.charAt(v.length() - 1);
    if (last == 'k' || last == 'm' || last == 'g') {
      unit = last == 'k' ? 1L << 10 : last == 'm' ? 1L << 20 : 1L << 30;
      v = v.substring(0, v.length() - 1);
    }
    try {
      long n = Long.parseLong(v);
      if (n < 0) {
        throw new NumberFormatException("negative");
      }
      return Math.multiplyExact(n, unit);
    } catch (NumberFormatException | ArithmeticException e) {
      throw new IllegalArgumentException(
          "-D" + MAX_BYTES_PROPERTY + "=" + value + " is not a size in bytes (for example 2g)", e);
    }
  }

  private static String mib(long bytes) {
    return String.format(Locale.ROOT, "%.1f MiB", bytes / 1048576.0);
  }
}
